"""Cross-check of the shared conventions against numpy."""
import numpy as np
from conftest import load_export


def test_taylor_weights_match_definition():
    # Definition w_t(nu) = ((nu - nu0)/nu0)^t (Rau & Cornwell 2011, eq. 9), evaluated by numpy.
    d = load_export("core_taylor_weights")
    nu = np.array(d["frequencies_hz"])
    nu0 = d["ref_freq_hz"]
    for t, row in enumerate(d["weights"]):
        np.testing.assert_allclose(row, ((nu - nu0) / nu0) ** t, rtol=1e-14, atol=1e-15)
