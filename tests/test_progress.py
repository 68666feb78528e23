"""Progress reports of long work: stages reach the installed sink; the CLI stays quiet on ask."""

from arealaw import ball, box, entropy, hypercubic
from arealaw._progress import report, reporting
from arealaw.cli import main


def _stages(network, region, method):
    seen = []
    with reporting(lambda stage, done, total: seen.append((stage, done, total))):
        entropy(network, region, method=method)
    return seen


def test_spectral_and_sparse_report_their_stages():
    net = hypercubic((16, 16), mass=0.3)
    seen = _stages(net, ball(net, 4.0), "spectral")
    corr = [(d, t) for s, d, t in seen if s == "correlators"]
    assert corr and corr[-1][0] == corr[-1][1]  # the last chunk completes the block
    disordered = hypercubic((12, 12), mass=0.3, mass_disorder=0.5, seed=2)
    solves = [d / t for s, d, t in _stages(disordered, box(disordered, 4), "sparse")
              if s == "shifted solves"]
    assert solves and all(0.0 <= f <= 1.0 for f in solves) and max(solves) > 0.5


def test_reports_without_a_sink_are_ignored_and_sinks_nest():
    report("spectrum", 1, 2)  # no sink: nothing happens, nothing raises
    outer, inner = [], []
    with reporting(lambda *a: outer.append(a)):
        with reporting(lambda *a: inner.append(a)):
            report("spectrum", 1, 2)
        report("spectrum", 2, 2)
    assert inner == [("spectrum", 1, 2)] and outer == [("spectrum", 2, 2)]


def test_quiet_cli_writes_nothing_to_stderr(capsys):
    assert main(["entropy", "--shape", "12", "12", "--mass", "0.3", "--ball", "3", "--quiet",
                 "--json"]) == 0
    assert capsys.readouterr().err == ""
