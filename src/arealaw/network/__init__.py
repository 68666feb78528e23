"""Networks of coupled oscillators: V and M, hypercubic lattices, and regions of sites."""

from ._lattices import HypercubicLattice, hypercubic
from ._network import OscillatorNetwork, load_network
from ._regions import (Region, ball, box, complement, cut_couplings, difference, from_mask,
                       from_sites, half_space, intersection, slab, union)
from ._specs import network_from_spec, region_from_spec

__all__ = sorted([
    "HypercubicLattice", "OscillatorNetwork", "Region", "ball", "box", "complement",
    "cut_couplings", "difference", "from_mask", "from_sites", "half_space", "hypercubic",
    "intersection", "load_network", "network_from_spec", "region_from_spec", "slab", "union",
])
