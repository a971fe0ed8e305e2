"""NEC rules: NFPA 70 National Electrical Code, 2023 edition (NEC 2023), as pure array functions.

Pinned edition: **NEC 2023** everywhere (tables renumbered across editions: e.g. Table 310.16 was
Table 310.15(B)(16) in NEC 2014 and 2017, and its values changed in 2014 — see each data file).
Every number comes from a data file in ``calc/data`` (``nec_2023_*.csv``, ``astm_b258_awg.csv``,
``us_customary_units.csv``) naming the table, the public reproduction where each value was
confirmed (``seen_in``) and its tag (``confirmed`` / ``memory`` / ``common practice``).

Modules:

* :mod:`calc.nec.sizes` — AWG and kcmil conductor sizes, areas in mm² from circular mils
  (ASTM B258 diameters), ``size_label`` both ways, feet;
* :mod:`calc.nec.ampacity` — Tables 310.16 / 310.17, ambient correction 310.15(B)(1) (table and
  formula), adjustment Table 310.15(C)(1), terminal limit 110.14(C), the 310.14(A)(2) exception;
* :mod:`calc.nec.impedance` — Chapter 9 Table 8 d.c. resistance and its temperature note, Table 9
  a.c. resistance and reactance, effective Z (Table 9 note 2);
* :mod:`calc.nec.pv` — 690.8(A) maximum currents, 690.8(B) conductor ampacity, 690.7 maximum
  voltage (coefficient method and Table 690.7(A));
* :mod:`calc.nec.protection` — 240.6(A) standard ratings, 690.9(B) PV overcurrent devices,
  240.4(B)/(C)/(D) conductor protection, Table 250.122 equipment grounding conductors.

Safety: a design aid only; the NEC as adopted by the authority having jurisdiction, the equipment
listings and the engineer of record govern. Values tagged ``memory`` must be checked against NEC
2023 before use.
"""
