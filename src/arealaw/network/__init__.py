"""Networks of coupled oscillators: V and M, hypercubic and radial lattices, regions of sites."""

from ._lattices import HypercubicLattice, hypercubic
from ._network import OscillatorNetwork, load_network
from ._radial import RadialLattice, radial_chain, radial_lattice, shells
from ._regions import (Region, ball, boundary_sites, box, complement, cut_couplings, difference, from_mask,
                       from_sites, half_space, intersection, slab, union)
from ._specs import network_from_spec, region_from_spec

__all__ = sorted([
    "HypercubicLattice", "OscillatorNetwork", "Region", "ball", "boundary_sites", "box", "complement",
    "cut_couplings", "difference", "from_mask", "from_sites", "half_space", "hypercubic",
    "intersection", "load_network", "network_from_spec", "region_from_spec", "slab", "union",
    "RadialLattice", "radial_chain", "radial_lattice", "shells",
])
