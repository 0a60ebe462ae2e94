"""Moonlit sky brightness (Krisciunas & Schaefer 1991) as a guide would meet it."""

import numpy as np
import pytest

from auroraplan import sky
from auroraplan.sky import mag_to_nl, moon_sky_nl, moonlit_sky_mag, nl_to_mag

FULL, QUARTER, CRESCENT = 0.0, 90.0, 140.0  # moon phase angle, degrees


def test_published_example_of_moonlight_alone():
    # Source: specsim documentation, krisciunas_schaefer() example (an independent
    # implementation of K&S 1991): target 20° from the zenith, moon 70° from the
    # zenith, 50° apart, moon_phase 0.25 (phase angle 0.25 × 180° = 45°), k = 0.15
    # gives 19.855 mag/arcsec² of scattered moonlight.
    b = moon_sky_nl(
        moon_alt_deg=20.0,
        moon_az_deg=0.0,
        target_alt_deg=70.0,
        target_az_deg=0.0,
        moon_phase_angle_deg=45.0,
        k_v=0.15,
    )
    assert nl_to_mag(b) == pytest.approx(19.855, abs=0.001)


def test_worked_by_hand_full_moon_30_degrees_up_sky_at_zenith():
    # Worked by hand from K&S 1991, k = 0.172, full moon (alpha = 0) 30° up, target at
    # the zenith, so rho = 60°:
    #   eq. 20  I*    = 10^(-0.4 × 3.84)                          = 0.029107
    #   eq. 21  f(60) = 10^5.36 (1.06 + 0.25) + 10^(6.15 - 1.5)   = 344 772
    #   eq. 3   X(60) = (1 - 0.96 × 0.75)^-0.5                      = 1.88982
    #           10^(-0.4 × 0.172 × 1.88982)                         = 0.741276
    #           1 - 10^(-0.4 × 0.172 × 1)                           = 0.146507
    #   eq. 15  B_moon = product                                    = 1089.9 nL
    #   eq. 1   21.5 mag/arcsec² = 34.08 exp(20.7233 - 0.92104 × 21.5) = 85.597 nL
    #           (85.597 + 1089.9) nL -> V = 18.656 mag/arcsec²
    b = moon_sky_nl(30.0, 0.0, 90.0, 0.0, FULL)
    assert b == pytest.approx(1089.9, rel=1e-3)
    assert mag_to_nl(21.5) == pytest.approx(85.597, rel=1e-4)
    assert moonlit_sky_mag(21.5, 30.0, 0.0, 90.0, 0.0, FULL) == pytest.approx(18.656, abs=0.002)


def test_mauna_kea_dark_sky_in_nanolamberts():
    # From memory: K&S 1991 quote the Mauna Kea zenith dark sky as 21.587 V mag/arcsec²,
    # i.e. 79.0 nanoLamberts, through their eq. 1.
    assert mag_to_nl(21.587) == pytest.approx(79.0, abs=0.1)
    assert nl_to_mag(mag_to_nl(np.array([18.0, 20.0, 22.0]))) == pytest.approx([18.0, 20.0, 22.0])


@pytest.mark.parametrize("moon_alt", [30.0, 45.0, 60.0])
@pytest.mark.parametrize("separation", [60.0, 75.0, 90.0])
def test_full_moon_brightens_a_dark_sky_to_about_18(moon_alt, separation):
    # From memory: a full moon 30-60° up turns a 21.5 mag/arcsec² sky into roughly
    # 17.5-19 V mag/arcsec² at 60-90° from the moon.
    target_alt = 20.0
    a, t, rho = np.radians([moon_alt, target_alt, separation])
    # azimuth difference that puts the target exactly rho from the moon (spherical cosine rule)
    d_az = np.degrees(np.arccos((np.cos(rho) - np.sin(a) * np.sin(t)) / (np.cos(a) * np.cos(t))))
    mag = moonlit_sky_mag(21.5, moon_alt, 0.0, target_alt, d_az, FULL)
    assert 17.5 <= mag <= 19.0


def test_moon_below_the_horizon_adds_nothing():
    mags = moonlit_sky_mag(21.3, [-0.5, -10.0, -60.0], 180.0, 25.0, 0.0, FULL)
    np.testing.assert_array_equal(mags, 21.3)
    assert moon_sky_nl(-1.0, 0.0, 40.0, 0.0, FULL) == 0.0


def test_sky_is_darker_further_from_the_moon():
    # Beyond ~10° the aureole fades: the sky darkens steadily out to 90° from the moon.
    azimuths = np.linspace(10.0, 90.0, 17)  # moon and target both on the horizon line at 0°
    mags = moonlit_sky_mag(21.5, 0.1, 0.0, 0.1, azimuths, FULL)
    mags_high = moonlit_sky_mag(21.5, 40.0, 0.0, 40.0, np.linspace(15.0, 120.0, 22), FULL)
    assert np.all(np.diff(mags) > 0)
    assert np.all(np.diff(mags_high) > 0)


def test_fuller_moon_brightens_the_sky_more():
    mags = moonlit_sky_mag(21.5, 35.0, 180.0, 20.0, 0.0, [FULL, 45.0, QUARTER, CRESCENT])
    assert np.all(np.diff(mags) > 0)
    # a full moon is roughly ten times as bright as a quarter moon (K&S eq. 20 gives 2.4 mag)
    moon_full = moon_sky_nl(35.0, 180.0, 20.0, 0.0, FULL)
    moon_quarter = moon_sky_nl(35.0, 180.0, 20.0, 0.0, QUARTER)
    assert moon_full / moon_quarter == pytest.approx(10 ** (0.4 * (0.026 * 90 + 4e-9 * 90**4)))


def test_broadcasts_over_sites_and_times():
    moon_alt = np.linspace(-10, 50, 8)[None, :]  # (1, T)
    target_alt = np.array([[10.0], [20.0], [30.0]])  # (N, 1)
    mags = moonlit_sky_mag(
        np.array([[21.0], [21.5], [22.0]]), moon_alt, 100.0, target_alt, 0.0, 30.0
    )
    assert mags.shape == (3, 8)
    assert np.all(mags <= np.array([[21.0], [21.5], [22.0]]) + 1e-12)


def test_zenith_dark_sky_is_brighter_toward_the_horizon():
    # K&S 1991 eq. 2: the moonless sky is brighter at larger zenith distance.
    at_zenith = moonlit_sky_mag(21.6, -20.0, 0.0, 90.0, 0.0, FULL, dark_sky_at_zenith=True)
    low = moonlit_sky_mag(21.6, -20.0, 0.0, 15.0, 0.0, FULL, dark_sky_at_zenith=True)
    assert at_zenith == pytest.approx(21.6)
    assert 20.3 < low < 21.4


def test_target_below_the_horizon_has_no_value():
    assert np.isnan(moonlit_sky_mag(21.5, 30.0, 0.0, -5.0, 0.0, FULL))


# --- extinction by the site's height ----------------------------------------------------------


def test_extinction_at_sea_level_is_the_usual_sea_level_value_and_falls_with_height():
    # Sea-level V-band extinction is typically 0.25-0.30 mag per airmass (from memory);
    # K&S (1991) measured 0.172 on Mauna Kea at 4.2 km, where the aerosol part is small.
    k = sky.extinction_k_v(np.array([0.0, 500.0, 1000.0, 2000.0, 4200.0]))
    assert 0.25 <= k[0] <= 0.30
    assert np.all(np.diff(k) < 0)
    assert k[-1] < sky.KS91_K_V < k[0]
    # Worked by hand from the three terms at 2 km: 0.1451 e^-0.2501 + 0.120 e^-1.333 + 0.016.
    assert k[3] == pytest.approx(0.1451 * np.exp(-2000 / 7996) + 0.120 * np.exp(-2000 / 1500)
                                 + 0.016, abs=1e-12)


def test_a_sea_level_site_sees_a_brighter_moonlit_sky_than_mauna_kea():
    # Full moon at 30 degrees, looking 20 degrees up away from it, a 21.7 mag dark sky:
    # with k at sea level the moonlit sky is 0.15-0.25 mag brighter than with K&S's 0.172
    # (more light scattered toward the observer outweighs the dimmer moon).
    sea = sky.moonlit_sky_mag(21.7, 30.0, 180.0, 20.0, 0.0, 0.0, k_v=sky.extinction_k_v(0.0))
    ks = sky.moonlit_sky_mag(21.7, 30.0, 180.0, 20.0, 0.0, 0.0)
    assert 0.15 <= ks - sea <= 0.25


def test_moonlit_sky_in_blocks_is_the_same_as_in_one_pass(monkeypatch):
    # The blocks only bound the working arrays: every value must be the one-pass value,
    # for a dark sky per site, a phase per time and a zenith dark sky brightened too.
    rng = np.random.default_rng(4)
    n, t = 300, 50
    args = (rng.uniform(20.0, 22.0, (n, 1)), rng.uniform(-30.0, 60.0, (n, t)),
            rng.uniform(0.0, 360.0, (n, t)), rng.uniform(-5.0, 90.0, (n, t)),
            rng.uniform(0.0, 360.0, (n, t)), rng.uniform(0.0, 180.0, (1, t)))
    k_v = rng.uniform(0.1, 0.3, (n, 1))
    for zenith in (False, True):
        monkeypatch.setattr(sky, "SKY_CELLS", 10**9)
        whole = moonlit_sky_mag(*args, k_v=k_v, dark_sky_at_zenith=zenith)
        monkeypatch.setattr(sky, "SKY_CELLS", 7 * t)
        blocks = moonlit_sky_mag(*args, k_v=k_v, dark_sky_at_zenith=zenith)
        np.testing.assert_array_equal(blocks, whole)
        assert np.isnan(whole).any() and np.isfinite(whole).any()
