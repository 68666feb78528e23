"""Scenario files: expansion into cases, content hashes, and validation messages."""

import pytest

from arealaw.workflow._scenario import Case, case_hash, load_scenario, parse_scenario

BASE = """
[lattices.chain]
shape = [40]
mass = 0.1
"""


def test_range_and_values_sweeps_expand_to_cases():
    sc = parse_scenario(BASE + """
[[family]]
name = "boxes"
box = {from = 2, to = 8, step = 3}
[[family]]
name = "balls"
ball = {values = [1.5, 2.5]}
""")
    assert [(c.family, c.x) for c in sc.cases] == [("boxes", 2), ("boxes", 5), ("boxes", 8),
                                                   ("balls", 1.5), ("balls", 2.5)]
    assert sc.cases[0].region == {"box": [2]}
    assert len({c.key for c in sc.cases}) == 5


def test_float_range_is_inclusive():
    sc = parse_scenario(BASE + "[[family]]\nball = {from = 2, to = 3, step = 0.5}\n")
    assert [c.x for c in sc.cases] == [2.0, 2.5, 3.0]


def test_lattice_sweep_multiplies_cases_and_labels_them():
    sc = parse_scenario("""
[lattices.chain]
shape = [30]
mass = {values = [0.1, 0.2]}
[[family]]
box = {from = 2, to = 4}
""")
    assert len(sc.cases) == 6
    assert {c.network["mass"] for c in sc.cases} == {0.1, 0.2}
    assert sc.cases[0].label == "box=2 | mass=0.1"


def test_numerics_defaults_and_family_override():
    sc = parse_scenario("""
[numerics]
renyi = [2, "inf"]
tol = 1e-8
[lattices.chain]
shape = [30]
[[family]]
box = 4
method = "dense"
""")
    (c,) = sc.cases
    assert c.tol == 1e-8 and c.method == "dense" and c.renyi == [2.0, float("inf")]


def test_pair_case_has_two_regions():
    sc = parse_scenario(BASE + """
[[pair]]
name = "p"
a = {box = [3], origin = [2]}
b = {box = [3], origin = [10]}
""")
    (c,) = sc.cases
    assert c.region == {"box": [3], "origin": [2]} and c.region_b == {"box": [3], "origin": [10]}


def test_hash_depends_on_content_not_on_names():
    a = Case({"shape": [8], "mass": 0.5}, {"box": [4]}, family="x", label="1")
    b = Case({"mass": 0.5, "shape": [8]}, {"box": [4]}, family="y", label="2")
    assert case_hash(a) == case_hash(b)
    for other in (Case({"shape": [8], "mass": 0.5}, {"box": [4]}, tol=1e-8),
                  Case({"shape": [8], "mass": 0.5}, {"box": [4]}, renyi=[2.0]),
                  Case({"shape": [8], "mass": 0.5}, {"box": [4]}, method="dense"),
                  Case({"shape": [8], "mass": 0.5}, {"box": [4]}, version="0.0.0"),
                  Case({"shape": [8], "mass": 0.4}, {"box": [4]})):
        assert case_hash(other) != case_hash(a)


def test_bundled_demo_scenario_is_valid():
    from importlib.resources import files
    sc = load_scenario(files("arealaw") / "data" / "demo.toml")
    pairs = [c for c in sc.cases if c.region_b is not None]
    assert len(pairs) >= 3 and len({c.x for c in pairs}) == len(pairs)  # a swept separation
    assert len(sc.cases) >= 6


BAD = [
    ("top-key", BASE + "colour = 1\n", ["'colour'", "line 5", "allowed", "lattices"]),
    ("toml-syntax", "[lattices.a]\nshape = [4\nmass = 1\n", ["not valid TOML", "line"]),
    ("method", "[numerics]\nmethod = \"fastest\"\n" + BASE + "[[family]]\nbox = 2\n",
     ["'fastest'", "line 2", "allowed", "dense"]),
    ("tol", "[numerics]\ntol = 2\n" + BASE + "[[family]]\nbox = 2\n", ["tol = 2", "(0, 1)"]),
    ("renyi", "[numerics]\nrenyi = [-1]\n" + BASE + "[[family]]\nbox = 2\n",
     ["renyi", "-1", "inf"]),
    ("energies", BASE + "[[family]]\nbox = 2\nenergies = -3\n", ["energies = -3", ">= 0"]),
    ("lattice-key", BASE + "colour = 2\n[[family]]\nbox = 2\n",
     ["'colour'", "line 5", "shape", "mass"]),
    ("lattice-value", "[lattices.a]\nshape = [8]\nmass = -1\n[[family]]\nbox = 2\n",
     ["mass", "-1", "line 3"]),
    ("no-lattice", "[[family]]\nbox = 2\n", ["no lattice", "[lattices.NAME]"]),
    ("nothing", BASE, ["nothing to compute", "[[family]]"]),
    ("undefined-lattice", BASE + "[[family]]\nlattice = \"cube\"\nbox = 2\n",
     ["'cube'", "line 6", "'chain'"]),
    ("two-kinds", BASE + "[[family]]\nbox = 2\nball = 3\n", ["exactly one region kind",
                                                             "box, ball"]),
    ("region-key", BASE + "[[family]]\nbox = 2\nradius = 3\n", ["'radius'", "line 7", "ball"]),
    ("sweep-order", BASE + "[[family]]\nbox = {from = 5, to = 2}\n", ["box", "from <= to"]),
    ("sweep-key", BASE + "[[family]]\nbox = {start = 5}\n", ["'start'", "from = A"]),
    ("region-outside", BASE + "[[family]]\nbox = [4]\norigin = [60]\n", ["origin = [60]", "outside"]),
    ("pair-missing-b", BASE + "[[pair]]\na = {box = [2]}\n", ["'b'", "missing"]),
    ("duplicate", BASE + "[[family]]\nbox = 2\n[[family]]\nname = \"again\"\nbox = [2]\n",
     ["repeats", "duplicate"]),
]


@pytest.mark.parametrize("text, fragments", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_validation_errors_name_key_value_and_allowed(text, fragments):
    with pytest.raises(ValueError) as info:
        parse_scenario(text, source="s.toml")
    msg = str(info.value)
    assert msg.startswith("s.toml")
    for frag in fragments:
        assert frag in msg, (frag, msg)


def test_missing_file_is_a_value_error(tmp_path):
    with pytest.raises(ValueError, match="does not exist"):
        load_scenario(tmp_path / "nope.toml")
