"""``arealaw entropy``: one case, a readable summary or one JSON object."""

import math

from .._entropy import entropy
from .._numerics import DEFAULT_TOL
from ..methods._registry import choose_method, method_names
from ..methods import radial_lattice, shells
from ..network._specs import network_from_spec, region_from_spec
from ._common import HelpFormatter, parse_extent, parse_order, print_json, progress_bars

__all__ = ["register"]

EPILOG = """examples:
  arealaw entropy --shape 100 --mass 0.01 --box 50 --origin 0  half of a massive chain
  arealaw entropy --shape 100 --mass 0.01 --box 50            middle half (two cuts)
  arealaw entropy --shape 1000 1000 1000 --box 10 10 10 --plan  method, estimated time, memory
  arealaw entropy --shape 20 20 20 --box 10 10 10 --renyi 2 inf
  arealaw entropy --shape 30 30 --mass 0.1 --boundary periodic dirichlet --ball 6 --json
  arealaw entropy --shape 40 --mass 0.2 --box 5 --origin 5 --box-b 5 --origin-b 20
  arealaw entropy --shape 200 --box 20 --origin 80 --box-b 20 --origin-b 100 --negativity
  arealaw entropy --potential V.npz --kinetic M.npz --sites region.txt
  arealaw entropy --shape 40 40 --mass 0.1 --box 10 10 --temperature 0.2   Gibbs state
  arealaw entropy --radial 60 --dim 3 --shells 10               ball by partial waves
  arealaw entropy --shape 20 inf inf --boundary dirichlet periodic periodic --half-space 0 10
                                                                entropy per unit area

Sites are in C order (last axis fastest); coordinates are 0-based site indices.
"""


def _region_options(parser, suffix=""):
    tag = "" if not suffix else " of region B"
    g = parser.add_argument_group("region" + (" B (for mutual information)" if suffix else ""))
    g.add_argument(f"--box{suffix}", nargs="+", type=int, metavar="S",
                   help=f"box{tag}: sites per axis")
    g.add_argument(f"--origin{suffix}", nargs="+", type=int, metavar="O",
                   help="corner of the box (default: centred)")
    g.add_argument(f"--ball{suffix}", type=float, metavar="R",
                   help=f"ball{tag}: sites at distance <= R from the centre")
    g.add_argument(f"--center{suffix}", nargs="+", type=float, metavar="C",
                   help="centre of the ball (default: lattice centre)")
    g.add_argument(f"--half-space{suffix}", nargs=2, type=int, metavar=("AXIS", "AT"),
                   help="sites with coordinate < AT along AXIS")
    g.add_argument(f"--slab{suffix}", nargs=3, type=int, metavar=("AXIS", "START", "STOP"),
                   help="sites with START <= coordinate < STOP along AXIS")
    g.add_argument(f"--sites{suffix}", metavar="FILE",
                   help="text file with one flat site index per line, or .npy")
    g.add_argument(f"--mask{suffix}", metavar="FILE", help=".npy boolean mask over all sites")


def register(sub):
    p = sub.add_parser("entropy", help="entanglement entropy of one region (or a pair)",
                       description="Entanglement entropy of a region of an oscillator network "
                                   "in its ground state (or, with --temperature, the entropy "
                                   "of the region in the Gibbs state at temperature T).",
                       epilog=EPILOG, formatter_class=HelpFormatter)
    lat = p.add_argument_group("lattice (or matrices)")
    lat.add_argument("--shape", nargs="+", type=parse_extent, metavar="N",
                     help="sites per axis (1-3 axes); 'inf' for an infinite axis")
    lat.add_argument("--mass", type=float, default=None, help="field mass m >= 0 (default 0)")
    lat.add_argument("--boundary", nargs="+", metavar="B",
                     help="dirichlet | periodic | open, one value or one per axis "
                          "(default dirichlet)")
    lat.add_argument("--coupling", nargs="+", type=float, metavar="J",
                     help="nearest-neighbour coupling, one value or one per axis (default 1)")
    lat.add_argument("--inertia", type=float, help="oscillator mass (diagonal of M, default 1)")
    lat.add_argument("--mass-disorder", type=float, metavar="W",
                     help="seeded random site masses m_i = m + W*u_i, u_i ~ U(0,1) "
                          "independent per site; any W >= 0")
    lat.add_argument("--coupling-disorder", type=float, metavar="W",
                     help="seeded random couplings J_b = J*(1 + W*u_b), u_b ~ U(-1,1) "
                          "independent per bond; 0 <= W < 1 keeps every J_b > 0")
    lat.add_argument("--seed", type=int, help="seed of the disorder")
    lat.add_argument("--potential", metavar="V.npz", help="potential matrix (scipy save_npz)")
    lat.add_argument("--kinetic", metavar="M.npz", help="kinetic matrix (scipy save_npz)")
    rad = p.add_argument_group("radial lattice (balls by partial waves, Srednicki 1993)")
    rad.add_argument("--radial", type=int, metavar="N",
                     help="N radial sites (Dirichlet wall at N+1) instead of --shape")
    rad.add_argument("--dim", type=int, metavar="D", help="dimension of the radial lattice: 2 or "
                                                         "3 (default 3)")
    rad.add_argument("--shells", type=int, metavar="n",
                     help="the ball: first n radial sites, radius n + 1/2")
    _region_options(p)
    _region_options(p, "-b")
    out = p.add_argument_group("measures and numerics")
    out.add_argument("--renyi", nargs="+", type=parse_order, default=[], metavar="N",
                     help="Rényi orders n > 0 (numbers or inf)")
    out.add_argument("--negativity", action="store_true",
                     help="with region B: also the logarithmic negativity E_N(A:B) of the "
                          "reduced state of A and B (JSON key log_negativity)")
    out.add_argument("--energies", type=int, default=0, metavar="K",
                     help="also list the K lowest entanglement energies")
    out.add_argument("--method", default="auto", choices=method_names(),
                     help="how to compute (default: auto, which says what it chose and why)")
    out.add_argument("--temperature", type=float, default=0.0, metavar="T",
                     help="temperature T >= 0 of the Gibbs state exp(-H/T), lattice units "
                          "(default 0: the ground state)")
    out.add_argument("--tol", type=float, default=DEFAULT_TOL,
                     help=f"target accuracy of the correlators (default {DEFAULT_TOL:g})")
    out.add_argument("--json", action="store_true", help="print one JSON object")
    out.add_argument("--plan", action="store_true",
                     help="only assess: print the method that would run, why, its estimated "
                          "time and memory, and compute nothing")
    out.add_argument("--quiet", action="store_true",
                     help="no progress bars (they appear on stderr, with an ETA, for stages "
                          "running longer than a few seconds)")
    p.set_defaults(func=run)


def _network(args):
    spec = {"shape": args.shape, "mass": args.mass, "boundary": args.boundary,
            "coupling": args.coupling, "inertia": args.inertia,
            "mass_disorder": args.mass_disorder, "coupling_disorder": args.coupling_disorder,
            "seed": args.seed, "potential": args.potential, "kinetic": args.kinetic}
    return network_from_spec(spec)


def _region_spec(args, suffix=""):
    s = suffix.replace("-", "_")
    spec = {"box": getattr(args, "box" + s), "origin": getattr(args, "origin" + s),
            "ball": getattr(args, "ball" + s), "center": getattr(args, "center" + s),
            "half_space": getattr(args, "half_space" + s), "slab": getattr(args, "slab" + s),
            "sites": getattr(args, "sites" + s), "mask": getattr(args, "mask" + s)}
    return {k: v for k, v in spec.items() if v is not None}


def _radial_case(args):
    """Network and region for --radial; None when --radial is not given."""
    if args.radial is None:
        for flag, value in (("--dim", args.dim), ("--shells", args.shells)):
            if value is not None:
                raise ValueError(f"{flag} belongs to the radial lattice; add --radial N")
        return None
    clash = [f for f, v in (("--shape", args.shape), ("--potential", args.potential),
                            ("--boundary", args.boundary), ("--coupling", args.coupling))
             if v is not None] + [f"--{k.replace('_', '-')}" for k in _region_spec(args)] \
        + [f"--{k.replace('_', '-')}-b" for k in _region_spec(args, "-b")]
    if clash:
        raise ValueError(f"--radial cannot be combined with {clash[0]}; the radial lattice is "
                         "set by --radial, --dim, --mass and its region by --shells")
    if args.shells is None:
        raise ValueError("--radial needs --shells n (the ball of the first n radial sites)")
    net = radial_lattice(args.radial, dim=3 if args.dim is None else args.dim,
                         mass=args.mass or 0.0)
    return net, shells(net, args.shells)


def run(args):
    radial = _radial_case(args)
    if radial is not None:
        return _report(args, *radial, None)
    net = _network(args)
    spec_a = _region_spec(args)
    if not spec_a:
        raise ValueError("no region given: use --box, --ball, --half-space, --slab, --sites "
                         "or --mask")
    region = region_from_spec(net, spec_a)
    spec_b = _region_spec(args, "-b")
    region_b = region_from_spec(net, spec_b) if spec_b else None
    if args.negativity and region_b is None:
        raise ValueError("--negativity needs a second region (--box-b, --ball-b, ...)")
    return _report(args, net, region, region_b)


def _plan(args, net, region, region_b):
    regions = [region] if region_b is None else [region, region_b]
    choice = choose_method(net, regions, args.method, tol=args.tol, blocks=args.negativity,
                           temperature=args.temperature)
    a = choice.method.assess(net, regions, tol=args.tol, temperature=args.temperature)
    out = {"method": choice.method.name, "reason": choice.reason,
           "estimated_seconds": a.seconds, "estimated_bytes": a.bytes,
           "region": region.description, "region_sites": region.size,
           "sites": "inf" if net.n_sites is None else net.n_sites}
    if args.json:
        print_json(out)
    else:
        print(f"method           {out['method']} — {out['reason']}\n"
              f"region           {out['region']} ({out['region_sites']} sites)\n"
              f"estimate         {a.seconds:.2g} s, {a.bytes / 2**30:.2g} GiB (nothing computed)")
    return 0


def _report(args, net, region, region_b):
    if args.plan:
        return _plan(args, net, region, region_b)
    res = entropy(net, region, region_b=region_b, renyi=args.renyi, method=args.method,
                  tol=args.tol, energies=args.energies, negativity=args.negativity,
                  temperature=args.temperature)
    with progress_bars(not args.quiet):
        res = entropy(net, region, region_b=region_b, renyi=args.renyi, method=args.method,
                      tol=args.tol, energies=args.energies, negativity=args.negativity,
                      temperature=args.temperature)
    out = res.to_dict()
    if "lmax" in res.info:  # partial waves: the explicit angular-momentum cut-off
        out["lmax"] = res.info["lmax"]
    if args.json:
        print_json(out)
    else:
        _summary(out)
    return 0


def _fmt(x):
    return "n/a" if x is None else (f"{x:.12g}" if isinstance(x, float) else str(x))


def _summary(d):
    lines = [f"network          {d['network']}",
             f"region           {d['region']} ({d['region_sites']} sites)",
             f"method           {d['method']} — {d['reason']}"]
    if d.get("temperature"):
        lines.append(f"temperature      {_fmt(d['temperature'])}  (Gibbs state)")
    lines.append(f"entropy          {_fmt(d['entropy'])}  (error bound {d['error_bound']:.2g})")
    if d.get("entropy_per_area") is not None:
        lines.append(f"entropy per area {_fmt(d['entropy_per_area'])}  (per unit boundary area; "
                     "Rényi values and bounds below are per area too)")
    if d.get("lmax") is not None:
        lines.append(f"l cut-off        {d['lmax']}: {d['info']['partial_waves']} partial waves "
                     f"summed exactly on {d['sites']} radial sites, tail integrated "
                     f"(estimate {d['info']['l_tail_estimate']:.6g})")
    for k, v in d["renyi"].items():
        lines.append(f"Rényi S_{k:<9} {_fmt(v)}  (error bound {d['renyi_error_bound'][k]:.2g})")
    if "mutual_information" in d:
        lines += [f"region B         {d['region_b']} ({d['region_b_sites']} sites)",
                  f"entropy B        {_fmt(d['entropy_b'])}",
                  f"entropy A∪B      {_fmt(d['entropy_ab'])}",
                  f"mutual info      {_fmt(d['mutual_information'])}  (error bound "
                  f"{d['mutual_information_error_bound']:.2g})"]
    if "log_negativity" in d:
        lines.append(f"log negativity   {_fmt(d['log_negativity'])}  (error bound "
                     f"{d['log_negativity_error_bound']:.2g}; "
                     f"{d['info']['log_negativity_route']})")
    if d.get("entanglement_energies"):
        e = ", ".join("inf" if (isinstance(x, str) or math.isinf(x)) else f"{x:.6g}"
                      for x in d["entanglement_energies"])
        lines.append(f"energies         {e}")
    lines.append(f"modes            {d['modes']}    time {d['seconds']:.3g} s")
    print("\n".join(lines))
