"""Life-cycle cost parts (calc.costs) against published values.

* Uniform-series present-worth factor (P/A, i, n) = (1 − (1 + i)^−n) / i: values as printed in
  the compound-interest tables of engineering-economics textbooks (4 decimals; from memory):
  (P/A, 5 %, 20) = 12.4622, (P/A, 10 %, 10) = 6.1446, (P/A, 8 %, 25) = 10.6748,
  (P/A, 6 %, 30) = 13.7648.
* Copper density 8.89 g/cm³ (IEC 60028:1925, annealed copper): 1 km of 1 mm² weighs 8.89 kg.
  Aluminium 2.703 g/cm³ (IEC 60889:1987, from memory).
"""

import numpy as np
import pytest

from calc.costs import annuity_factor, capitalised_loss, conductor_mass_kg, density_kg_m3
from calc.errors import InputError, UnknownOptionError


@pytest.mark.parametrize(
    ("rate_pct", "years", "factor"),
    [(5.0, 20, 12.4622), (10.0, 10, 6.1446), (8.0, 25, 10.6748), (6.0, 30, 13.7648)],
)
def test_present_worth_factor_against_interest_tables(rate_pct, years, factor):
    assert annuity_factor(rate_pct, years) == pytest.approx(factor, abs=5e-5)


def test_without_discounting_the_factor_is_the_number_of_years():
    assert annuity_factor(0.0, 25) == 25.0
    # the limit of (1 − (1 + i)^−n) / i as i → 0 is n: a tiny rate is continuous with it
    assert annuity_factor(1e-6, 25) == pytest.approx(25.0, rel=1e-5)


@pytest.mark.parametrize("rate_pct", [1e-8, 1e-12, 1e-300])
def test_a_tiny_rate_keeps_its_digits(rate_pct):
    # the factor's series in i: n − n(n + 1)/2 · i + O(i²); (1 − (1 + i)^−n) / i written as it
    # stands loses every digit to cancellation (0 at 1e-300 %, which ranked placements by
    # conductor cost alone)
    i, n = rate_pct / 100.0, 25
    assert annuity_factor(rate_pct, n) == pytest.approx(n - n * (n + 1) / 2 * i, abs=1e-12)


def test_capitalised_loss_worked_example():
    # 12,000 kWh lost a year at 0.08 per kWh for 20 years at 5 %:
    # 12,000 × 0.08 = 960 a year; × (P/A, 5 %, 20) = 12.4622 → 11,963.7
    got = capitalised_loss([12_000.0], 0.08, 5.0, 20)
    assert got[0] == pytest.approx(960.0 * 12.4622, rel=1e-5)


def test_conductor_mass_from_density():
    # IEC 60028: 8.89 g/cm³ → 1 mm² × 1000 m = 1 cm³ × 1000 = 8.89 kg
    assert conductor_mass_kg([1.0], [1000.0], ["Cu"])[0] == pytest.approx(8.89)
    # aluminium 2.703 g/cm³ (from memory): 240 mm² × 3 × 500 m
    assert conductor_mass_kg([240.0], [1500.0], ["Al"])[0] == pytest.approx(240e-6 * 1500 * 2703.0)
    assert density_kg_m3([["Cu", "Al"], ["Al", "Cu"]]).tolist() == [
        [8890.0, 2703.0],
        [2703.0, 8890.0],
    ]


def test_conductor_mass_of_materials_given_as_codes():
    # the same densities (IEC 60028 copper, aluminium from memory) read through codes into a
    # list of names: 10 mm² Cu × 1000 m = 88.9 kg, 240 mm² Al × 1000 m = 648.72 kg
    got = conductor_mass_kg([10.0, 240.0, 10.0], [1000.0] * 3, [1, 0, 1], ["Al", "Cu"])
    np.testing.assert_allclose(got, [88.9, 240e-6 * 1000 * 2703.0, 88.9], rtol=1e-12)
    assert conductor_mass_kg([], [], np.array([], dtype=int), ["Cu"]).size == 0
    # a code outside the names, a negative one (numpy would read it from the end) or a text
    for codes in ([2], [-1], ["Cu"]):
        with pytest.raises(InputError, match="material codes must index the 2 materials"):
            conductor_mass_kg([10.0], [1.0], codes, ["Al", "Cu"])
    with pytest.raises(UnknownOptionError):
        conductor_mass_kg([10.0], [1.0], [0], ["Fe"])


def test_bad_inputs_are_refused():
    with pytest.raises(UnknownOptionError):
        density_kg_m3(["Fe"])
    with pytest.raises(InputError):
        annuity_factor(-1.0, 10)
    with pytest.raises(InputError):
        annuity_factor(5.0, float("nan"))
    with pytest.raises(InputError):
        capitalised_loss([1.0], -0.1, 5.0, 10)
    with pytest.raises(InputError):
        conductor_mass_kg([-1.0], [10.0], ["Cu"])


def test_zero_years_and_zero_lengths_are_valid_and_give_zero():
    # no year of losses is worth nothing; a conductor of no length or no area weighs nothing
    assert annuity_factor(5.0, 0) == 0.0
    assert annuity_factor(0.0, 0) == 0.0
    assert conductor_mass_kg([10.0, 0.0], [0.0, 100.0], ["Cu", "Al"]).tolist() == [0.0, 0.0]
    assert capitalised_loss([0.0], 0.05, 5.0, 20).tolist() == [0.0]


def test_each_refusal_names_the_value_refused():
    # one line naming the input (DEVELOPERS.md: every failure names what is wrong)
    with pytest.raises(InputError, match=r"^discount rate -1\.0 % and 10 years must be ≥ 0$"):
        annuity_factor(-1.0, 10)
    with pytest.raises(InputError, match=r"^discount rate 5\.0 % and -2 years must be ≥ 0$"):
        annuity_factor(5.0, -2)
    with pytest.raises(InputError, match=r"^energy price -0\.1 must be ≥ 0$"):
        capitalised_loss([1.0], -0.1, 5.0, 10)
    with pytest.raises(InputError, match=r"^conductor size and length must be ≥ 0$"):
        conductor_mass_kg([10.0], [-1.0], ["Cu"])
    with pytest.raises(UnknownOptionError, match=r"^material must be one of 'Cu', 'Al'; got 'Fe'"):
        density_kg_m3(["Cu", "Fe"])


def test_a_rate_or_price_that_is_not_finite_is_refused():
    # an infinite rate would give a factor of 0 and an infinite price an infinite cost: refused
    for rate, years in ((float("inf"), 10), (float("nan"), 10), (5.0, float("inf"))):
        with pytest.raises(InputError):
            annuity_factor(rate, years)
    for price in (float("inf"), float("nan")):
        with pytest.raises(InputError):
            capitalised_loss([1.0], price, 5.0, 10)


def test_a_free_energy_price_is_valid_and_costs_nothing():
    assert capitalised_loss([12_000.0], 0.0, 5.0, 20).tolist() == [0.0]


def test_missing_values_give_an_unknown_result_not_an_error():
    # as elsewhere in calc (tests/calc/test_drop_loss_missing_values.py): a None from a user's
    # table is read as nan (not known), never a TypeError
    got = conductor_mass_kg([1.0, None, 1.0], [1000.0, 1000.0, None], ["Cu", "Cu", "Cu"])
    assert got[0] == pytest.approx(8.89)  # IEC 60028: 8.89 g/cm³
    assert np.isnan(got[1:]).all()
    got = capitalised_loss([1000.0, None], 0.05, 0.0, 10)  # 1,000 kWh × 0.05 × 10 years
    assert got[0] == pytest.approx(500.0) and np.isnan(got[1])


def test_no_circuits_give_empty_results():
    assert density_kg_m3([]).tolist() == []
    assert conductor_mass_kg([], [], []).tolist() == []


def test_material_names_given_as_byte_strings_are_read_as_text():
    # a numpy byte-string array (dtype "S", as binary readers return text) names the same metals
    names = np.array([b"Cu", b"Al"])
    assert density_kg_m3(names).tolist() == [8890.0, 2703.0]
