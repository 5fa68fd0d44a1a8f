"""Cross-check of the array geometry against pyerfa (IAU SOFA routines) and numpy."""
import erfa
import numpy as np
from conftest import load_export


def wrap(a):
    """Angle difference folded into [-pi, pi): q = +pi and q = -pi are the same angle."""
    return (np.asarray(a) + np.pi) % (2 * np.pi) - np.pi


def test_parallactic_angle_and_elevation_match_sofa():
    # SOFA hd2pa (parallactic angle) and hd2ae (azimuth, elevation) through pyerfa. Both routines
    # evaluate the same spherical trigonometry as the Rust code, so agreement is to rounding;
    # 1e-10 rad leaves room for different libm sin/cos/atan2 implementations.
    d = load_export("array_angles")
    ha, dec, lat = (np.array(d[k]) for k in ("hour_angle_rad", "declination_rad", "latitude_rad"))
    pa = erfa.hd2pa(ha, dec, lat)
    _, el = erfa.hd2ae(ha, dec, lat)
    assert len(ha) > 1000
    np.testing.assert_array_less(np.abs(wrap(np.array(d["parallactic_angle_rad"]) - pa)), 1e-10)
    np.testing.assert_allclose(d["elevation_rad"], el, rtol=0, atol=1e-10)


def test_uvw_matches_the_sky_frame_built_from_sofa_horizon_coordinates():
    # Independent geometry: erfa.hd2ae gives the phase centre's azimuth (from north through east)
    # and elevation, hence its unit vector s in local east-north-up. The uvw frame is w along s,
    # u towards east on the sky (perpendicular to s and to the pole p = (0, cos lat, sin lat)),
    # v = s x u towards north (Thompson, Moran & Swenson, ch. 4). Projecting the ENU baseline on
    # that frame must give the Rust uvw (which goes ENU -> XYZ -> TMS eq. 4.1). Baselines up to
    # 1.2 km: 1e-8 m is about 1e-11 relative, rounding of the frame construction near the pole.
    recs = load_export("array_uvw")["records"]
    assert len(recs) > 500
    for r in recs:
        az, el = erfa.hd2ae(r["ha"], r["dec"], r["lat"])
        s = np.array([np.sin(az) * np.cos(el), np.cos(az) * np.cos(el), np.sin(el)])
        pole = np.array([0.0, np.cos(r["lat"]), np.sin(r["lat"])])
        u_hat = np.cross(pole, s)
        u_hat /= np.linalg.norm(u_hat)
        v_hat = np.cross(s, u_hat)
        b = np.array(r["enu_m"])
        expect = [b @ u_hat, b @ v_hat, b @ s]
        np.testing.assert_allclose(r["uvw_m"], expect, rtol=0, atol=1e-8)


def test_sidereal_rate_matches_sofa_gmst82():
    # Greenwich mean sidereal time by the IAU 1982 model (SOFA gmst82): over one day of UT1
    # starting at J2000.0 it advances by 2 pi times the rate, modulo 2 pi. The model's rate has a
    # 5.9e-11-per-century drift and its J2000 value 1.002737909350795 is rounded to 11 decimals
    # in the Rust constant, so agreement to 1e-12; float angle rounding over one day is ~1e-15.
    d = load_export("array_timeline")
    g0 = erfa.gmst82(2451545.0, 0.0)
    g1 = erfa.gmst82(2451546.0, 0.0)
    rate = 1.0 + ((g1 - g0) % (2 * np.pi)) / (2 * np.pi)
    assert abs(d["sidereal_seconds_per_solar_second"] - rate) < 1e-12
    assert abs(d["hour_angle_rate_rad_per_s"] - rate * 2 * np.pi / 86400.0) < 1e-16


def test_timeline_hour_angles_angles_and_flags():
    d = load_export("array_timeline")
    ha, t = np.array(d["hour_angles_rad"]), np.array(d["times_s"])
    rate = d["hour_angle_rate_rad_per_s"]
    tau = d["integration_s"]
    # Hour angle advances linearly with time at the sidereal rate (definition).
    np.testing.assert_allclose(ha, d["hour_angle_start_rad"] + rate * t, rtol=0, atol=1e-13)
    # Whole integrations, contiguous, centred in the range (definition in the Rust docs).
    duration = (d["hour_angle_end_rad"] - d["hour_angle_start_rad"]) / rate
    n = int(np.floor(duration / tau))
    assert len(t) == n
    np.testing.assert_allclose(np.diff(t), tau, rtol=0, atol=1e-9)
    assert abs((t[0] - tau / 2) - (duration - (t[-1] + tau / 2))) < 1e-9
    # Parallactic angle and elevation per sample from SOFA (see the first test for tolerances).
    dec, lat = d["declination_rad"], d["latitude_rad"]
    np.testing.assert_array_less(
        np.abs(wrap(np.array(d["parallactic_angles_rad"]) - erfa.hd2pa(ha, dec, lat))), 1e-10)
    _, el = erfa.hd2ae(ha, dec, lat)
    np.testing.assert_allclose(d["elevations_rad"], el, rtol=0, atol=1e-10)
    flagged = np.array(d["flagged"])
    np.testing.assert_array_equal(flagged, el < d["elevation_limit_rad"])
    assert flagged.any() and not flagged.all()


def test_channels_are_midpoints_of_equal_bins():
    # n equal channels tile the band: centres are the midpoints of numpy.linspace edges.
    d = load_export("array_timeline")
    f_min, f_max = d["band_hz"]
    edges = np.linspace(f_min, f_max, len(d["frequencies_hz"]) + 1)
    np.testing.assert_allclose(d["frequencies_hz"], (edges[:-1] + edges[1:]) / 2, rtol=1e-15)
    np.testing.assert_allclose(d["width_hz"], np.diff(edges), rtol=1e-12)
