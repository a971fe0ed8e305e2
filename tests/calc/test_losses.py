"""Conductor losses by Joule's law and the equivalent loss hours (calc.losses)."""

from numpy.testing import assert_allclose

from calc.losses import energy_loss_kwh, loss_w


def test_joule_losses_by_number_of_conductors():
    # P = n I² R L / p: n = 2 (d.c., single-phase), 3 (three-phase); 100 A, 0.2 Ω/km, 500 m
    base = 100.0**2 * 0.2 * 0.5
    assert_allclose(loss_w(100.0, 500.0, 0.2, [0, 1, 3]), [2 * base, 2 * base, 3 * base])
    assert_allclose(
        loss_w(100.0, 500.0, 0.2, 3, parallel=[1, 2, 3]), [3 * base / p for p in (1, 2, 3)]
    )
    assert_allclose(loss_w(0.0, 500.0, 0.2), [0.0])  # no current, no loss
    assert_allclose(loss_w(100, 500, 1, 0), [2 * 100**2 * 1 * 0.5])  # integers alike


def test_energy_from_loss_hours():
    # E = P · h_loss: 2.5 kW for 1200 h = 3000 kWh; zero hours, zero energy
    assert_allclose(energy_loss_kwh([2500.0, 0.0], 1200.0), [3000.0, 0.0])
    assert_allclose(energy_loss_kwh([2500.0], 0), [0.0])
