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


# --- plot, report and demo: silent with --quiet, bars for long stages otherwise -------------

SQUARE = """
title = "tiny square"
[numerics]
method = "dense"
[lattices.square]
shape = [10, 10]
mass = 0.3
[[family]]
name = "boxes"
box = {from = 2, to = 6}
"""


def _slow_modes(monkeypatch):
    """Bars show at once, and the recomputation of modes reports a stage as a long one would
    (through the progress protocol, without sleeping)."""
    import arealaw.cli._common as common
    import arealaw.views._report as views_report
    real = views_report.region_modes

    def reporting_modes(*args, **kwargs):
        for done in range(1, 4):
            report("spectrum", done, 3)
        return real(*args, **kwargs)
    monkeypatch.setattr(common, "PROGRESS_DELAY", 0.0)
    monkeypatch.setattr(views_report, "region_modes", reporting_modes)


def _run(capsys, argv):
    capsys.readouterr()
    assert main(argv) == 0
    return capsys.readouterr().err


def test_plot_report_and_demo_bars_only_without_quiet(tmp_path, capsys, monkeypatch):
    import arealaw.cli._demo as demo
    _slow_modes(monkeypatch)
    scen = tmp_path / "s.toml"
    scen.write_text(SQUARE)
    store = str(tmp_path / "s.sqlite")
    assert _run(capsys, ["run", str(scen), "--store", store, "--quiet"]) == ""
    plot = ["plot", "--store", store, "--out", str(tmp_path / "f"), "--format", "png"]
    rep = ["report", "--store", store, "--out", str(tmp_path / "r.html"), "--no-figure-files"]
    monkeypatch.setattr(demo, "demo_scenario_text", lambda: SQUARE)
    dem = ["demo", "--out", str(tmp_path / "demo"), "--workers", "1"]
    for argv, group in ((plot, "plot"), (rep, "report"), (dem, None)):
        assert _run(capsys, argv + ["--quiet"]) == "", argv[0]
        err = _run(capsys, argv)
        assert "spectrum" in err, (argv[0], err)  # the stage's bar
        if group:
            assert f"{group}:" in err, (argv[0], err)  # the bar over groups
