"""Print the README performance table of the spectral method (issue 3 targets).

Each case runs once, in its own subprocess with one BLAS thread (peak memory = that process's
maximum resident set).  The dense baseline (benchmarks/dense_baseline.py: eigh of V, blocks,
eigvals) is timed at 12³, 14³, 16³ and extrapolated to 20³ with N³ scaling of the fit through
the largest size; ``--dense20`` runs the 20³ baseline once instead (about 4 minutes here).

    OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 python scripts/perf_table.py [--dense20]
"""

import json
import os
import subprocess
import sys

CHILD = r"""
import json, resource, sys, time
sys.path.insert(0, {root!r})
from arealaw import ball, box, entropy, hypercubic
from benchmarks.dense_baseline import dense_entropy
kind, arg = sys.argv[1], json.loads(sys.argv[2])
t0 = time.perf_counter()
if kind == "dense":
    s = dense_entropy(arg, arg // 2)
else:
    net = hypercubic((arg["side"],) * 3, mass=0.0)
    reg = (box(net, arg["cube"]) if "cube" in arg
           else ball(net, arg["radius"], center=(arg["side"] // 2,) * 3))
    t0 = time.perf_counter()
    res = entropy(net, reg, method="spectral")
    s, sites = res.entropy, reg.size
t = time.perf_counter() - t0
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({{"s": s, "seconds": t, "peak_bytes": rss}}))
"""


def run(kind, arg):
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    out = subprocess.run([sys.executable, "-c", CHILD.format(root=root), kind, json.dumps(arg)],
                         capture_output=True, text=True, env=env, timeout=1800, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv):
    dense = {n: run("dense", n) for n in (12, 14, 16)}
    if "--dense20" in argv:
        d20 = run("dense", 20)
        d20_note = "measured"
    else:
        d20 = {"s": None, "seconds": dense[16]["seconds"] * (20 / 16) ** 9}
        d20_note = "extrapolated N^3 from 16^3"
    rows = []
    for n in (12, 14, 16):
        sp = run("spectral", {"side": n, "cube": n // 2})
        rows.append((f"{n}^3 Dirichlet, cube {n // 2}", dense[n]["seconds"], sp,
                     abs(sp["s"] - dense[n]["s"]), "measured"))
    sp = run("spectral", {"side": 20, "cube": 10})
    rows.append(("20^3 Dirichlet, cube 10", d20["seconds"], sp,
                 abs(sp["s"] - d20["s"]) if d20["s"] is not None else None, d20_note))
    for side in (101, 100):
        sp = run("spectral", {"side": side, "radius": 13})
        rows.append((f"{side}^3 Dirichlet, ball r=13", None, sp, None,
                     "mirror-symmetric" if side % 2 else "no mirror symmetry"))
    sp = run("spectral", {"side": 1000, "cube": 10})
    rows.append(("1000^3 Dirichlet, cube 10", None, sp, None, "10^9 sites"))
    print("| case | dense baseline (s) | spectral (s) | ratio | abs dS | peak memory | note |")
    print("|---|---|---|---|---|---|---|")
    for name, td, sp, ds, note in rows:
        ratio = f"{td / sp['seconds']:.0f}x" if td else "-"
        tds = f"{td:.1f}" if td else "infeasible"
        dss = f"{ds:.1e}" if ds is not None else "-"
        print(f"| {name} | {tds} | {sp['seconds']:.2f} | {ratio} | {dss} | "
              f"{sp['peak_bytes'] / 2**30:.2f} GiB | {note} |")


if __name__ == "__main__":
    main(sys.argv[1:])
