"""Seepage-meter flux: volume / (area x time), efficiency, signs, detection floor."""
import numpy as np
import pytest

from bedflux import InputError
from bedflux.field import detection_flux, pan_area, seepage_flux, volume_from_mass

CM_PER_DAY = 8.64e6  # 1 m/s = 8.64e6 cm/d (unit arithmetic)


def test_drum_end_pan_area():
    # Lee (1977): the meter is the cut end of a 208-L drum, about 0.57 m across, area 0.255 m^2
    # (pan size from memory); pi D^2 / 4 with D = 0.57 m.
    assert pan_area(0.57) == pytest.approx(0.2552, abs=5e-5)


def test_500_ml_in_30_min_on_a_drum_end():
    # Definition q = dV / (A dt) (Lee 1977): 500 mL over 0.2552 m^2 in 30 min is 1.0886e-6 m/s,
    # 9.405 cm/d (issue 4 check; references 1.2).
    q = seepage_flux(500e-6, 30 * 60, pan_area(0.57))
    assert q == pytest.approx(1.0886e-6, rel=1e-4)
    assert q * CM_PER_DAY == pytest.approx(9.405, rel=1e-3)


def test_belanger_montgomery_efficiency():
    # Belanger & Montgomery (1992): measured/actual = 0.77 in tank tests, so the bed flux is the
    # metered flux / 0.77: 12.21 cm/d for the reading above (references 1.3: 12.2146).
    q = seepage_flux(500e-6, 1800, pan_area(0.57), efficiency=0.77)
    assert q * CM_PER_DAY == pytest.approx(12.2146, rel=1e-4)


def test_mass_readings_match_volume_readings():
    # 1 kg of water at 1000 kg/m^3 is 1 L (definition of density); a bag weighed 1.250 kg -> 1.750 kg
    # holds the same 500 mL gain as the volume reading.
    dv = volume_from_mass(1.750, 1000.0) - volume_from_mass(1.250, 1000.0)
    assert seepage_flux(dv, 1800, 0.2552) == pytest.approx(seepage_flux(500e-6, 1800, 0.2552), rel=1e-12)


def test_bag_that_lost_water_is_recharge():
    # Sign convention (references section 0): a bag that lost water means downward flow (losing).
    assert seepage_flux(-200e-6, 3600, 0.25) < 0


def test_arrays_broadcast():
    dv = np.array([100e-6, 200e-6, 400e-6])
    q = seepage_flux(dv, 3600.0, 0.25)
    # Flux is linear in the volume change (definition).
    np.testing.assert_allclose(q / q[0], [1, 2, 4])


@pytest.mark.parametrize("hours, expected_cm_d", [(0.5, 2.82), (1, 1.41), (2, 0.705), (4, 0.353)])
def test_detection_floor(hours, expected_cm_d):
    # Cable et al. (1997): reliable readings need >= 150 mL net bag change; on A = 0.25518 m^2
    # that resolves about 2.82 / 1.41 / 0.705 / 0.353 cm/d over 0.5 / 1 / 2 / 4 h (references 1.5).
    assert detection_flux(hours * 3600, 0.25518) * CM_PER_DAY == pytest.approx(expected_cm_d, rel=2e-3)


@pytest.mark.parametrize("kwargs", [dict(duration=0.0), dict(area=-1.0), dict(efficiency=0.0)])
def test_non_physical_inputs_raise(kwargs):
    args = dict(volume_change=1e-4, duration=600.0, area=0.25, efficiency=1.0) | kwargs
    with pytest.raises(InputError):
        seepage_flux(**args)
