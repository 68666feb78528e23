"""The bad-input corpus: one table of hostile inputs across the CLI, the API, scenario files and
stores, each with words its one-line message must contain and the exit status (CLI) or the
exception class (API).  Never a traceback, never a number where an error is due.
"""

import pickle
import sqlite3

import numpy as np
import pytest
import scipy.sparse as sp

import arealaw as al
from arealaw.cli import main
from arealaw.workflow import fit_scaling

NET = al.hypercubic((10, 10), mass=1.0)
BIG = al.hypercubic((20, 20), mass=1.0)
CHAIN = al.hypercubic(30, mass=0.5)

BASE = "[lattices.a]\nshape = [12]\nmass = 0.5\n"


def _files(d):
    """Bad and good input files, written once per test into ``d``."""
    sp.save_npz(d / "V.npz", sp.csr_matrix(np.array([[2.0, -1.0], [-1.0, 2.0]])))
    n = 4000  # indefinite V with a positive diagonal
    v = sp.diags([np.ones(n), np.full(n - 1, -0.9), np.full(n - 1, -0.9)], [0, 1, -1])
    sp.save_npz(d / "indefinite.npz", v.tocsr())
    (d / "notnpz.npz").write_text("not an archive")
    np.save(d / "objects.npy", np.array([1, "a", None], dtype=object), allow_pickle=True)
    with open(d / "pickled.npy", "wb") as fh:
        pickle.dump(np.ones((10, 10), bool), fh)
    np.save(d / "mask_shape.npy", np.ones(7, bool))
    np.save(d / "mask_values.npy", np.full(100, 3))
    (d / "sites.txt").write_text("1\n2\nthree\n")
    (d / "sites_range.txt").write_text("1\n200\n")
    (d / "sites_dup.txt").write_text("1\n1\n")
    (d / "sites_ok.txt").write_text("0\n1\n2\n")
    (d / "sites_frac.txt").write_text("1.5\n")
    (d / "corrupt.sqlite").write_bytes(b"not sqlite" * 100)
    with sqlite3.connect(d / "foreign.sqlite") as con:
        con.execute("CREATE TABLE notes (x TEXT)")
    con.close()
    with sqlite3.connect(d / "old.sqlite") as con:
        con.execute("CREATE TABLE cases (case_key TEXT PRIMARY KEY, result TEXT)")
        con.execute("CREATE TABLE runs (run_id TEXT)")
    con.close()
    from arealaw.workflow._scenario import Case
    from arealaw.workflow._store import ResultStore
    with ResultStore(d / "v001.sqlite", version="0.0.1") as st:
        st.put(Case({"shape": [8], "mass": 0.5}, {"box": [4]}, version="0.0.1"),
               {"entropy": 0.1, "error_bound": 1e-12, "seconds": 0.0})
    (d / "truncated.sqlite").write_bytes((d / "v001.sqlite").read_bytes()[:4096])
    (d / "badresult.sqlite").write_bytes((d / "v001.sqlite").read_bytes())
    with sqlite3.connect(d / "badresult.sqlite") as con:  # edited by another program
        con.execute("UPDATE cases SET result = '{not json'")
    con.close()
    (d / "s.toml").write_text(BASE + "[[family]]\nbox = {from = 2, to = 3}\n")
    (d / "afile").write_text("x")
    (d / "adir.sqlite").mkdir()


E = ["entropy"]
SH = E + ["--shape", "10", "10", "--mass", "1"]

# (id, surface, input, words of the message, exit status or exception class)
# surface: cli = argv (with {d} for the folder of _files); api = callable;
#          scenario = TOML text run by `arealaw run`; store = argv of a store command.
CORPUS = [
    # -- arealaw entropy: lattice options
    ("cli-no-lattice", "cli", E + ["--box", "3"], ["no lattice", "shape"], 2),
    ("cli-shape-zero", "cli", E + ["--shape", "0", "--box", "1"], ["'0'", "positive"], 2),
    ("cli-shape-word", "cli", E + ["--shape", "ten", "--box", "1"], ["'ten'", "inf"], 2),
    ("cli-shape-4d", "cli", E + ["--shape", "2", "2", "2", "2", "--box", "1"], ["4 axes"], 2),
    ("cli-mass-negative", "cli", E + ["--shape", "10", "--mass", "-1", "--box", "2"],
     ["mass", "-1"], 2),
    ("cli-mass-nan", "cli", E + ["--shape", "10", "--mass", "nan", "--box", "2"], ["mass"], 2),
    ("cli-boundary-typo", "cli", SH + ["--boundary", "periodc", "--box", "3"],
     ["periodc", "did you mean 'periodic'"], 2),
    ("cli-boundary-count", "cli", SH + ["--boundary", "open", "open", "open", "--box", "3"],
     ["boundary", "3 values", "2 axes"], 2),
    ("cli-coupling-zero", "cli", SH + ["--coupling", "0", "--box", "3"], ["coupling", "> 0"], 2),
    ("cli-coupling-count", "cli", SH + ["--coupling", "1", "2", "3", "--box", "3"],
     ["coupling", "2 axes"], 2),
    ("cli-massless-periodic", "cli", E + ["--shape", "8", "--boundary", "periodic", "--box", "2"],
     ["zero mode", "mass"], 2),
    ("cli-coupling-disorder", "cli", SH + ["--coupling-disorder", "1.5", "--box", "3"],
     ["coupling_disorder", "0 <= w < 1"], 2),
    ("cli-seed-negative", "cli", SH + ["--mass-disorder", "0.1", "--seed", "-3", "--box", "3"],
     ["seed", ">= 0"], 2),
    ("cli-inertia-zero", "cli", SH + ["--inertia", "0", "--box", "3"], ["inertia", "> 0"], 2),
    ("cli-shape-and-potential", "cli", SH + ["--potential", "{d}/V.npz", "--sites", "x"],
     ["cannot be combined", "potential"], 2),
    ("cli-kinetic-alone", "cli", E + ["--kinetic", "{d}/V.npz", "--box", "1"],
     ["kinetic", "potential"], 2),
    ("cli-potential-missing", "cli", E + ["--potential", "{d}/nope.npz", "--sites", "x"],
     ["does not exist"], 2),
    ("cli-potential-not-npz", "cli", E + ["--potential", "{d}/notnpz.npz", "--sites", "x"],
     ["not a scipy.sparse"], 2),
    ("cli-indefinite-4000", "cli", E + ["--potential", "{d}/indefinite.npz", "--sites",
                                        "{d}/sites_ok.txt"], ["not positive definite"], 2),
    # -- arealaw entropy: regions
    ("cli-no-region", "cli", SH, ["no region", "--box"], 2),
    ("cli-two-kinds", "cli", SH + ["--box", "3", "--ball", "2"], ["exactly one region kind"], 2),
    ("cli-box-outside", "cli", SH + ["--box", "3", "--origin", "9", "0"], ["outside"], 2),
    ("cli-box-zero", "cli", SH + ["--box", "0"], ["box size", ">= 1"], 2),
    ("cli-box-axes", "cli", SH + ["--box", "2", "2", "2"], ["3 values", "2 axes"], 2),
    ("cli-box-float", "cli", SH + ["--box", "2.7"], ["invalid int value", "2.7"], 2),
    ("cli-origin-alone", "cli", SH + ["--ball", "2", "--origin", "1", "1"],
     ["'origin'", "does not go with 'ball'"], 2),
    ("cli-ball-negative", "cli", SH + ["--ball", "-2"], ["ball radius", ">= 0"], 2),
    ("cli-ball-empty", "cli", SH + ["--ball", "0.2", "--center", "0.5", "0.5"], ["no sites"], 2),
    ("cli-ball-inf", "cli", SH + ["--ball", "inf"], ["ball radius", "finite"], 2),
    ("cli-slab-axis", "cli", SH + ["--slab", "2", "0", "1"], ["axis 2", "out of range"], 2),
    ("cli-slab-order", "cli", SH + ["--slab", "0", "5", "3"], ["start < stop"], 2),
    ("cli-half-space-axis", "cli", SH + ["--half-space", "5", "3"], ["axis 5"], 2),
    ("cli-sites-missing", "cli", SH + ["--sites", "{d}/nope.txt"], ["does not exist"], 2),
    ("cli-sites-text", "cli", SH + ["--sites", "{d}/sites.txt"], ["sites.txt", "integer"], 2),
    ("cli-sites-range", "cli", SH + ["--sites", "{d}/sites_range.txt"],
     ["200", "out of range"], 2),
    ("cli-sites-duplicate", "cli", SH + ["--sites", "{d}/sites_dup.txt"], ["more than once"], 2),
    ("cli-sites-fraction", "cli", SH + ["--sites", "{d}/sites_frac.txt"], ["1.5"], 2),
    ("cli-sites-objects", "cli", SH + ["--sites", "{d}/objects.npy"],
     ["objects.npy", "Python objects"], 2),
    ("cli-mask-pickled", "cli", SH + ["--mask", "{d}/pickled.npy"],
     ["pickled.npy", "pickled", "numpy.save"], 2),
    ("cli-mask-size", "cli", SH + ["--mask", "{d}/mask_shape.npy"], ["7 entries", "100"], 2),
    ("cli-mask-values", "cli", SH + ["--mask", "{d}/mask_values.npy"], ["boolean"], 2),
    ("cli-regions-overlap", "cli", SH + ["--box", "3", "--origin", "0", "0", "--box-b", "3",
                                         "--origin-b", "1", "1"], ["share"], 2),
    ("cli-negativity-alone", "cli", SH + ["--box", "3", "--negativity"], ["second region"], 2),
    # -- arealaw entropy: measures, numerics, options
    ("cli-renyi-zero", "cli", SH + ["--box", "3", "--renyi", "0"], ["Rényi", "> 0"], 2),
    ("cli-renyi-word", "cli", SH + ["--box", "3", "--renyi", "two"], ["'two'"], 2),
    ("cli-tol-big", "cli", SH + ["--box", "3", "--tol", "2"], ["tol=2", "(0, 1)"], 2),
    ("cli-tol-unreachable", "cli", SH + ["--box", "3", "--tol", "1e-30"],
     ["tol=1e-30", "reach", "1e-14"], 2),
    ("cli-energies-negative", "cli", SH + ["--box", "3", "--energies", "-1"], ["energies"], 2),
    ("cli-method-typo", "cli", SH + ["--box", "3", "--method", "dens"],
     ["'dens'", "did you mean 'dense'"], 2),
    ("cli-method-cannot", "cli", SH + ["--box", "3", "--method", "radial"],
     ["'radial' cannot serve"], 2),
    ("cli-option-typo", "cli", SH + ["--box", "3", "--shpe", "4"],
     ["--shpe", "did you mean '--shape'"], 2),
    ("cli-command-typo", "cli", ["entropi"], ["'entropi'", "did you mean 'entropy'"], 2),
    ("cli-radial-shells", "cli", E + ["--radial", "10", "--shells", "10"], ["shells", "< N"], 2),
    ("cli-radial-clash", "cli", E + ["--radial", "10", "--shells", "3", "--box", "2"],
     ["--radial cannot be combined"], 2),
    ("cli-dim-alone", "cli", E + ["--shape", "8", "--box", "2", "--dim", "3"], ["--radial"], 2),
    # -- refusals before allocating (shape and options only)
    ("cli-mass-overflow", "cli", E + ["--shape", "10", "--mass", "1e200", "--box", "3"],
     ["mass=1e+200", "rescale"], 2),
    ("cli-huge-box", "cli", E + ["--shape", "100000", "100000", "--box", "50000", "50000"],
     ["needs about", "available", "smaller region"], 2),
    ("cli-huge-ball-infinite", "cli", E + ["--shape", "inf", "inf", "--mass", "0.1", "--ball",
                                           "1000000"], ["needs about", "available"], 2),
    ("cli-huge-disorder", "cli", E + ["--shape", "1000", "1000", "1000", "--mass", "0.1",
                                      "--mass-disorder", "0.5", "--box", "3"],
     ["no method can serve", "needs about", "uniform"], 2),
    ("cli-huge-cube", "cli", E + ["--shape", "1000", "1000", "1000", "--box", "200", "200",
                                  "200"], ["no method fits in memory", "smaller region"], 2),
    # -- arealaw run options
    ("cli-run-missing", "cli", ["run", "{d}/nope.toml"], ["does not exist"], 2),
    ("cli-run-timeout", "cli", ["run", "{d}/s.toml", "--scheduler-timeout", "-1"],
     ["--scheduler-timeout", "> 0"], 2),
    ("cli-run-workers-zero", "cli", ["run", "{d}/s.toml", "--workers", "0"], ["'0'", ">= 1"],
     2),
    ("cli-run-scheduler-down", "cli", ["run", "{d}/s.toml", "--store", "{d}/r.sqlite",
                                       "--scheduler", "tcp://127.0.0.1:9",
                                       "--scheduler-timeout", "0.5"],
     ["cannot reach the dask scheduler"], 2),
    # -- stores
    ("store-missing", "store", ["results", "--store", "{d}/nope.sqlite"],
     ["does not exist", "arealaw run"], 2),
    ("store-corrupt-results", "store", ["results", "--store", "{d}/corrupt.sqlite"],
     ["not an arealaw result store"], 2),
    ("store-corrupt-run", "store", ["run", "{d}/s.toml", "--store", "{d}/corrupt.sqlite"],
     ["not an arealaw result store"], 2),
    ("store-foreign-results", "store", ["results", "--store", "{d}/foreign.sqlite"],
     ["another program", "notes", "does not modify"], 2),
    ("store-foreign-run", "store", ["run", "{d}/s.toml", "--store", "{d}/foreign.sqlite"],
     ["another program", "new --store"], 2),
    ("store-old-layout", "store", ["results", "--store", "{d}/old.sqlite"],
     ["older table layout", "new --store"], 2),
    ("store-other-version", "store", ["run", "{d}/s.toml", "--store", "{d}/v001.sqlite"],
     ["arealaw 0.0.1", "not mixed", "new --store"], 2),
    ("store-folder", "store", ["run", "{d}/s.toml", "--store", "{d}/adir.sqlite"],
     ["is a folder"], 2),
    ("store-under-a-file", "store", ["run", "{d}/s.toml", "--store", "{d}/afile/r.sqlite"],
     ["cannot create the folder", "another --store"], 2),
    ("store-truncated", "store", ["results", "--store", "{d}/truncated.sqlite"],
     ["damaged", "new --store"], 2),
    ("store-result-edited", "store", ["results", "--store", "{d}/badresult.sqlite"],
     ["cannot be read", "outside arealaw"], 2),
    ("store-result-edited-fit", "store", ["fit", "--store", "{d}/badresult.sqlite"],
     ["cannot be read", "outside arealaw"], 2),
    ("store-results-family-typo", "store", ["results", "--store", "{d}/v001.sqlite",
                                            "--family", "nope"],
     ["no results for family 'nope'", "allowed"], 2),
    ("store-fit-empty-family", "store", ["fit", "--store", "{d}/v001.sqlite", "--family", "x"],
     ["no results", "family 'x'"], 2),
    # -- scenario files (run by `arealaw run`)
    ("scn-not-toml", "scenario", "shape = [", ["not valid TOML"], 2),
    ("scn-top-typo", "scenario", "titel = 'x'\n" + BASE + "[[family]]\nbox = 2\n",
     ["'titel'", "did you mean 'title'"], 2),
    ("scn-lattice-typo", "scenario", BASE + "mas = 1\n[[family]]\nbox = 2\n",
     ["'mas'", "did you mean 'mass'"], 2),
    ("scn-mass-true", "scenario", "[lattices.a]\nshape = [12]\nmass = true\n[[family]]\nbox = 2\n",
     ["mass", "True"], 2),
    ("scn-box-true", "scenario", BASE + "[[family]]\nbox = true\n", ["box", "True"], 2),
    ("scn-box-fraction", "scenario", BASE + "[[family]]\nbox = 2.5\n", ["2.5", "whole number"],
     2),
    ("scn-origin-fraction", "scenario", BASE + "[[family]]\nbox = [2]\norigin = [1.5]\n",
     ["1.5", "whole number"], 2),
    ("scn-shape-true", "scenario", "[lattices.a]\nshape = true\nmass = 1\n[[family]]\nbox = 2\n",
     ["shape", "True"], 2),
    ("scn-method-typo", "scenario", "[numerics]\nmethod = \"spectrl\"\n" + BASE +
     "[[family]]\nbox = 2\n", ["'spectrl'", "did you mean 'spectral'"], 2),
    ("scn-tol-tiny", "scenario", "[numerics]\ntol = 1e-30\n" + BASE + "[[family]]\nbox = 2\n",
     ["tol", "1e-14"], 2),
    ("scn-undefined-lattice", "scenario", BASE + "[[family]]\nlattice = \"b\"\nbox = 2\n",
     ["'b'", "not defined"], 2),
    ("scn-region-outside", "scenario", BASE + "[[family]]\nbox = [4]\norigin = [60]\n",
     ["outside"], 2),
    ("scn-sweep-backwards", "scenario", BASE + "[[family]]\nbox = {from = 5, to = 2}\n",
     ["from <= to"], 2),
    ("scn-nothing", "scenario", BASE, ["nothing to compute"], 2),
    ("scn-family-name-twice", "scenario", BASE + "[[family]]\nname = 'x'\nbox = 2\n"
     "[[family]]\nname = 'x'\nbox = 3\n", ["'x'", "already used", "own name"], 2),
    # -- Python API
    ("api-region-other-network", "api", lambda: al.entropy(NET, al.box(BIG, 3)),
     ["another network", "20x20", "10x10"], ValueError),
    ("api-region-b-other-network", "api",
     lambda: al.entropy(NET, al.box(NET, 2, origin=(0, 0)), region_b=al.box(BIG, 2)),
     ["region_b", "another network"], ValueError),
    ("api-negativity-other-network", "api",
     lambda: al.logarithmic_negativity(NET, al.box(NET, 2, origin=(0, 0)), al.box(BIG, 2)),
     ["another network"], ValueError),
    ("api-1d-region-on-2d", "api", lambda: al.entropy(NET, al.box(CHAIN, 3)),
     ["another network", "chain of 30 sites"], ValueError),
    ("api-union-other-network", "api", lambda: al.union(NET, al.box(NET, 2), al.box(BIG, 2)),
     ["another network"], ValueError),
    ("api-box-fraction", "api", lambda: al.box(NET, 2.7), ["box size", "2.7", "truncated"],
     ValueError),
    ("api-origin-fraction", "api", lambda: al.box(NET, 2, origin=(1.5, 2.5)),
     ["box origin", "1.5"], ValueError),
    ("api-hypercubic-true", "api", lambda: al.hypercubic(True), ["shape entry", "True"],
     ValueError),
    ("api-hypercubic-none", "api", lambda: al.hypercubic(None), ["shape", "None"], ValueError),
    ("api-mass-string", "api", lambda: al.hypercubic(10, mass="0.1"), ["mass", "'0.1'"],
     ValueError),
    ("api-entropy-string-network", "api", lambda: al.entropy("net", al.box(NET, 2)),
     ["network must be an OscillatorNetwork", "str"], ValueError),
    ("api-entropy-not-region", "api", lambda: al.entropy(NET, [1, 2, 3]),
     ["region must be a Region", "list"], ValueError),
    ("api-ball-string", "api", lambda: al.ball(NET, "3"), ["ball radius", "'3'"], ValueError),
    ("api-box-none", "api", lambda: al.box(NET, None), ["box size", "None"], ValueError),
    ("api-box-string-network", "api", lambda: al.box("net", 2), ["network", "str"], ValueError),
    ("api-method-list", "api", lambda: al.entropy(NET, al.box(NET, 2), method=["dense"]),
     ["method must be a method name", "list"], ValueError),
    ("api-method-typo", "api", lambda: al.entropy(NET, al.box(NET, 2), method="sparce"),
     ["'sparce'", "did you mean 'sparse'"], ValueError),
    ("api-ragged-matrix", "api", lambda: al.OscillatorNetwork([[2.0, -1.0], [-1.0]]),
     ["potential V", "rectangular"], ValueError),
    ("api-string-matrix", "api", lambda: al.OscillatorNetwork([["a", "b"], ["c", "d"]]),
     ["potential V"], ValueError),
    ("api-sites-ragged", "api", lambda: al.from_sites(NET, [[1, 2], [3]]),
     ["sites", "ragged"], ValueError),
    ("api-mask-strings", "api", lambda: al.from_mask(NET, ["a"] * 100), ["mask", "boolean"],
     ValueError),
    ("api-axis-float", "api", lambda: al.slab(NET, 0.5, 0, 2), ["axis", "0.5"], ValueError),
    ("api-tol-bool", "api", lambda: al.entropy(NET, al.box(NET, 2), tol=True), ["tol=True"],
     ValueError),
    ("api-energies-float", "api", lambda: al.entropy(NET, al.box(NET, 2), energies=2.5),
     ["energies=2.5"], ValueError),
    ("api-run-cases-string", "api", lambda: al.run_cases("abc", None),
     ["cases must be a list of Case", "str"], ValueError),
    ("api-mass-overflow", "api", lambda: al.hypercubic(10, mass=1e200), ["mass=1e+200", "rescale"],
     ValueError),
    ("api-inertia-underflow", "api", lambda: al.hypercubic(10, mass=1.0, inertia=1e-320),
     ["inertia", "rescale"], ValueError),
    ("api-fit-power-nan", "api", lambda: fit_scaling([2, 3, 4, 5], [1, 2, 3, 4], dim=2,
                                                     powers=[float("nan")]),
     ["power", "finite", "nan"], ValueError),
    ("api-workers-zero", "api", lambda: al.run_cases([], None, workers=0), ["workers=0"],
     ValueError),
]


def _fill(argv, d):
    return [a.replace("{d}", str(d)) for a in argv]


@pytest.mark.parametrize("surface, given, words, status", [c[1:] for c in CORPUS],
                         ids=[c[0] for c in CORPUS])
def test_bad_input_gives_one_clear_line(surface, given, words, status, tmp_path, capsys):
    _files(tmp_path)
    if surface == "api":
        with pytest.raises(status) as info:
            given()
        message = str(info.value)
        assert "\n" not in message
    else:
        if surface == "scenario":
            (tmp_path / "bad.toml").write_text(given)
            given = ["run", "{d}/bad.toml", "--store", "{d}/r.sqlite", "--no-progress"]
        capsys.readouterr()
        try:
            code = main(_fill(given, tmp_path))
        except SystemExit as exc:  # argparse errors
            code = exc.code
        out, message = capsys.readouterr()
        assert code == status, (code, out, message)
        assert "Traceback" not in message and message.count("\n") == 1, message
    for w in words:
        assert w.lower() in message.lower(), (w, message)


def test_corpus_is_large_and_covers_every_surface():
    assert len(CORPUS) >= 80
    assert {c[1] for c in CORPUS} == {"cli", "api", "scenario", "store"}
    assert len({c[0] for c in CORPUS}) == len(CORPUS)
