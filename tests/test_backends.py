"""Every registered correlator backend against the dense reference on the case table.

The dense backend diagonalises V exactly (to rounding, with a posteriori bounds); every other
backend must agree with it within the sum of both reported bounds (common practice, no source:
a reported bound that the dense difference exceeds is a defect).
"""

import numpy as np
import pytest

from arealaw import (UnsupportedMethodError, entropy_error_bound, symplectic_spectrum,
                     von_neumann_entropy)
from arealaw.correlators import get_backend

TOL = 1e-10


def test_backend_blocks_and_entropy_match_dense_within_bounds(table_case, backend):
    name, net, region = table_case
    verdict = backend.assess(net, region.size, tol=TOL)
    rows = region.indices
    if not verdict.ok:
        # a refusal must be honest: a reason, and blocks() refusing the same case in one line
        assert verdict.reason, f"{backend.name} refuses {name} without a reason"
        with pytest.raises(UnsupportedMethodError):
            backend.blocks(net, rows, tol=TOL)
        return
    ref = get_backend("dense").blocks(net, rows, tol=TOL)
    got = backend.blocks(net, rows, tol=TOL)
    assert got.x.shape == got.p.shape == (region.size, region.size)
    ex = np.linalg.norm(got.x - ref.x, 2)
    ep = np.linalg.norm(got.p - ref.p, 2)
    assert ex <= got.x_error + ref.x_error, f"X differs by {ex:.3g}"
    assert ep <= got.p_error + ref.p_error, f"P differs by {ep:.3g}"
    # the accuracy asked for is met, not only bounded (correlators of order 1 here)
    assert ex <= 100 * TOL and ep <= 100 * TOL
    s_ref = symplectic_spectrum(ref.x, ref.p, x_error=ref.x_error, p_error=ref.p_error)
    s_got = symplectic_spectrum(got.x, got.p, x_error=got.x_error, p_error=got.p_error)
    diff = abs(von_neumann_entropy(s_got) - von_neumann_entropy(s_ref))
    assert diff <= entropy_error_bound(s_got) + entropy_error_bound(s_ref)
    assert diff <= 1e-8


def test_case_table_covers_every_backend(backend):
    # each registered backend must serve at least one case, or it would never be tested
    from conftest import CASES
    served = [name for name, (make_net, make_region) in CASES.items()
              if backend.assess((net := make_net()), make_region(net).size, tol=TOL).ok]
    assert served, f"no case of the table is served by {backend.name}"
