"""Cross-check of a small `run_experiment` folder with astropy: every FITS file the run wrote
passes astropy's standard verification, and its WCS maps the reference pixel to the phase centre.

The Rust side is crates/experiment/tests/run_end_to_end.rs (it writes the run into the
crosscheck folder and `run_small.json` beside it).
"""
import pathlib
import warnings

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

from conftest import load_export


def test_every_fits_file_verifies_and_points_at_the_phase_centre():
    e = load_export("run_small")
    run = pathlib.Path(e["run_dir"])
    written = sorted(p.relative_to(run).as_posix() for p in run.rglob("*.fits"))
    assert written == sorted(e["fits"]), written
    for rel in written:
        with fits.open(run / rel) as hdul:
            # astropy's FITS standard checks (Pence et al. 2010, FITS 3.0); raises on any error.
            hdul.verify("exception")
            header = hdul[0].header
            data = hdul[0].data
            assert np.isfinite(data).any(), rel
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # our own third axis (TAYTERM) is not celestial
                w = WCS(header).celestial
            crpix = w.wcs.crpix  # 1-based reference pixel
            sky = w.pixel_to_world(crpix[0] - 1.0, crpix[1] - 1.0)
            # The reference pixel is the phase centre by construction of the SIN projection
            # (Calabretta & Greisen 2002): agreement to double rounding, 1e-9 deg.
            assert abs(sky.ra.deg - e["phase_centre_ra_deg"]) < 1e-9, (rel, sky)
            assert abs(sky.dec.deg - e["phase_centre_dec_deg"]) < 1e-9, (rel, sky)
            # The pixel scale is the configured cell; RA decreases with x (east left).
            assert abs(w.wcs.cdelt[0] + e["cell_deg"]) < 1e-12
            assert abs(w.wcs.cdelt[1] - e["cell_deg"]) < 1e-12
            assert w.wcs.ctype[0].endswith("SIN") and w.wcs.ctype[1].endswith("SIN")
            if "restored" in rel or "residual" in rel or "error" in rel:
                assert header["BUNIT"] == "Jy/beam"
                assert header["BMAJ"] >= header["BMIN"] > 0
            if "model" in rel:
                assert header["BUNIT"] == "Jy/pixel"
