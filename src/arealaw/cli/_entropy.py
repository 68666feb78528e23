"""``arealaw entropy``: one case, a readable summary or one JSON object."""

import math

from .._entropy import entropy
from .._numerics import DEFAULT_TOL, check_tol
from .._parallel import connect
from ..methods import RadialMethod
from ..methods._radial import DEFAULT_RTOL as RADIAL_RTOL
from ..methods._registry import choose_method, method_names
from ..network import network_from_spec, radial_lattice, region_from_spec, shells
from ..network._specs import LATTICE_SPEC, MATRIX_SPEC, REGION_SPEC
from ._common import (HelpFormatter, parse_extent, parse_order, positive_float, positive_int,
                      print_json, progress_bars)

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
  arealaw entropy --shape 40 40 40 --mass 0.3 --mass-disorder 0.5 --seed 1 --ball 5 --workers 2
  arealaw entropy --shape 100 100 100 --mass-disorder 1 --ball 6 --scheduler tcp://head:8786
                                          work units (column blocks) on a dask cluster's workers
  arealaw entropy --shape 20 inf inf --boundary dirichlet periodic periodic --half-space 0 10
                                                                entropy per unit area

Sites are in C order (last axis fastest); coordinates are 0-based site indices.
"""


_TYPES = {"int": int, "float": float, "str": str, "path": str, "extent": parse_extent}


def _add_options(group, keys, suffix="", tag=""):
    """One option per spec key (``--half-space`` for ``half_space``), from the network layer."""
    for k in keys:
        help_ = k.help if not tag or k.of else k.help.replace(":", tag + ":", 1)
        group.add_argument(f"--{k.key.replace('_', '-')}{suffix}", nargs=k.count,
                           type=_TYPES[k.kind], metavar=k.metavar, help=help_)


def _region_options(parser, suffix=""):
    g = parser.add_argument_group("region" + (" B (for mutual information)" if suffix else ""))
    _add_options(g, REGION_SPEC, suffix, " of region B" if suffix else "")


def register(sub):
    p = sub.add_parser("entropy", help="entanglement entropy of one region (or a pair)",
                       description="Entanglement entropy of a region of an oscillator network "
                                   "in its ground state (or, with --temperature, the entropy "
                                   "of the region in the Gibbs state at temperature T).",
                       epilog=EPILOG, formatter_class=HelpFormatter)
    lat = p.add_argument_group("lattice (or matrices)")
    _add_options(lat, LATTICE_SPEC + MATRIX_SPEC)
    rad = p.add_argument_group("radial lattice (balls by partial waves, Srednicki 1993)")
    rad.add_argument("--radial", type=int, metavar="N",
                     help="N radial sites (Dirichlet wall at N+1) instead of --shape")
    rad.add_argument("--dim", type=int, metavar="D", help="dimension of the radial lattice: 2 or "
                                                         "3 (default 3)")
    rad.add_argument("--shells", type=int, metavar="n",
                     help="the ball: first n radial sites, radius n + 1/2")
    rad.add_argument("--rtol", type=float, metavar="R",
                     help="relative accuracy of the sum over angular momenta (default "
                          f"{RADIAL_RTOL:g}): the cut-off lmax is the smallest whose proven "
                          "tail bound meets max(--tol, R*S)/2")
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
    par = p.add_argument_group("parallel work (column blocks of sparse solves, parity sectors, "
                               "partial waves, transverse momenta)")
    par.add_argument("--workers", type=positive_int, metavar="N",
                     help="local worker processes (default: automatic; 1: this process only)")
    par.add_argument("--scheduler", metavar="ADDRESS",
                     help="send the work units to the workers of a dask.distributed scheduler, "
                          "e.g. tcp://head-node:8786 (workers need arealaw, not your files)")
    par.add_argument("--scheduler-timeout", type=positive_float, default=20.0,
                     metavar="SECONDS",
                     help="how long to try reaching the scheduler (default 20)")
    p.set_defaults(func=run)


def _network(args):
    return network_from_spec({k.key: getattr(args, k.key) for k in LATTICE_SPEC + MATRIX_SPEC})


def _region_spec(args, suffix=""):
    s = suffix.replace("-", "_")
    spec = {k.key: getattr(args, k.key + s) for k in REGION_SPEC}
    return {k: v for k, v in spec.items() if v is not None}


def _radial_case(args):
    """Network and region for --radial; None when --radial is not given."""
    if args.radial is None:
        for flag, value in (("--dim", args.dim), ("--shells", args.shells),
                            ("--rtol", args.rtol)):
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
        if args.rtol is not None and args.method in ("auto", "radial"):
            args.method = RadialMethod(rtol=check_tol(args.rtol, "--rtol"))
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
    if args.workers is not None and args.scheduler is not None:
        raise ValueError(f"give --workers {args.workers} or --scheduler {args.scheduler}, not "
                         "both (workers are local processes, the scheduler's are a cluster's)")
    # connect before computing: an unreachable scheduler is one line, not a late failure
    client = connect(args.scheduler, timeout=args.scheduler_timeout) if args.scheduler else None
    try:
        with progress_bars(not args.quiet):
            res = entropy(net, region, region_b=region_b, renyi=args.renyi, method=args.method,
                          tol=args.tol, energies=args.energies, negativity=args.negativity,
                          temperature=args.temperature, workers=args.workers, scheduler=client)
    finally:
        if client is not None:
            client.close()
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
                     f"summed exactly on {d['sites']} radial sites; the tail l > "
                     f"{d['lmax']} lies in [{d['info']['l_tail_lower']:.8g}, "
                     f"{d['info']['l_tail_upper']:.8g}] (proven), its midpoint added")
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
