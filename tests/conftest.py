"""Shared test fixtures: one named table of small networks and regions, and a ``backend``
fixture over every registered correlator backend.

A new backend is tested against the dense reference by registering it
(:func:`arealaw.correlators.register_backend`): ``test_backends.py`` then runs it on every case
of :data:`CASES` that its ``assess`` accepts.
"""

import numpy as np
import pytest
import scipy.sparse as sp

from arealaw import OscillatorNetwork, ball, box, from_sites, half_space, hypercubic, slab
from arealaw.correlators import backend_names, get_backend


def _chain_with_general_mass(n=40, seed=7):
    """A massive chain with a non-diagonal kinetic matrix M (diagonally dominant, so SPD)."""
    rng = np.random.default_rng(seed)
    v = sp.diags([-np.ones(n - 1), 2.09 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1])
    off = -0.15 * rng.random(n - 1)
    m = sp.diags([off, 1.0 + np.abs(np.r_[off, 0]) + np.abs(np.r_[0, off]) + 0.1, off],
                 [-1, 0, 1])
    return OscillatorNetwork(v.tocsr(), m.tocsr())


#: name → (network factory, region factory).  Small enough that the dense reference is instant;
#: together they cover 1-D/2-D/3-D, Dirichlet/periodic/open walls, massive and massless
#: (where a ground state exists), disorder and a user network with a non-diagonal M.
CASES = {
    "1d-dirichlet-massless": (lambda: hypercubic(48), lambda n: box(n, 10, origin=6)),
    "1d-periodic-massive": (lambda: hypercubic(40, mass=0.3, boundary="periodic"),
                            lambda n: box(n, 12, origin=0)),
    "1d-open-massive": (lambda: hypercubic(36, mass=0.5, boundary="open"),
                        lambda n: box(n, 9, origin=0)),
    "2d-dirichlet-massless": (lambda: hypercubic((12, 12)), lambda n: ball(n, 2.5)),
    "2d-periodic-massive": (lambda: hypercubic((10, 10), mass=0.2, boundary="periodic"),
                            lambda n: box(n, [4, 3], origin=[1, 2])),
    "2d-mixed-open": (lambda: hypercubic((9, 10), mass=0.4, boundary=("open", "periodic")),
                      lambda n: half_space(n, 0, 3)),
    "3d-dirichlet-massive": (lambda: hypercubic((7, 7, 7), mass=0.2), lambda n: ball(n, 1.5)),
    "3d-periodic-massive": (lambda: hypercubic((6, 6, 6), mass=0.5, boundary="periodic"),
                            lambda n: slab(n, 2, 0, 1)),
    "2d-disordered": (lambda: hypercubic((10, 9), mass=0.3, mass_disorder=0.5,
                                         coupling_disorder=0.4, seed=3),
                      lambda n: box(n, [3, 4], origin=[2, 2])),
    "user-matrix-general-M": (_chain_with_general_mass,
                              lambda n: from_sites(n, np.arange(5, 17))),
}


@pytest.fixture(params=sorted(CASES))
def table_case(request):
    """(name, network, region) of one entry of :data:`CASES`."""
    make_net, make_region = CASES[request.param]
    net = make_net()
    return request.param, net, make_region(net)


@pytest.fixture(params=backend_names())
def backend(request):
    """Every registered correlator backend, by name."""
    return get_backend(request.param)
