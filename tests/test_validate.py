"""``arealaw validate`` and the reference-table machinery."""

import json

import pytest

import arealaw.workflow._validation as validation
from arealaw.workflow._validation import Reference, references, run_validation
from arealaw.cli import main


def test_quick_subset_passes_and_prints_rows(capsys):
    assert main(["validate", "--quick"]) == 0
    out = capsys.readouterr().out
    assert out.count("PASS") == len(references(quick=True)) and "FAIL" not in out
    assert "Srednicki 1993" in out and "0 failed" in out


def test_wrong_tolerance_makes_a_row_fail():
    good = Reference("exact", lambda: 0.5, 0.5, 1e-12, "common practice, no source")
    bad = Reference("off by 1e-6", lambda: 0.5 + 1e-6, 0.5, 1e-9, "common practice, no source")
    rel = Reference("relative", lambda: 2.0 * (1 + 1e-3), 2.0, 1e-4, "common practice, no source",
                    relative=True)
    rows = run_validation([good, bad, rel])
    assert [r.passed for r in rows] == [True, False, False]
    assert rows[1].deviation == pytest.approx(1e-6, rel=1e-6)
    assert rows[2].deviation == pytest.approx(1e-3, rel=1e-9)
    assert rows[1].to_dict()["status"] == "FAIL"


def test_a_computation_error_is_a_failed_row():
    def broken():
        raise ValueError("no such lattice")
    (row,) = run_validation([Reference("broken", broken, 1.0, 1.0, "common practice, no source")])
    assert not row.passed and row.computed is None and "no such lattice" in row.error


def test_cli_exit_status_and_json_on_failure(monkeypatch, capsys):
    table = (Reference("fails", lambda: 1.0, 2.0, 1e-3, "common practice, no source"),
             Reference("passes", lambda: 2.0, 2.0, 1e-3, "common practice, no source"))
    monkeypatch.setattr(validation, "REFERENCES", table)
    assert main(["validate", "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["failed"] == 1 and doc["passed"] == 1
    assert [r["status"] for r in doc["rows"]] == ["FAIL", "PASS"]
    assert main(["validate"]) == 1
    assert "FAIL  fails" in capsys.readouterr().out


def test_every_reference_names_a_source():
    for ref in references():
        assert len(ref.source) > 10 and ref.tolerance > 0
    assert {r.case for r in references(quick=True)} < {r.case for r in references()}


def test_reference_kinds_are_kept_apart(monkeypatch, capsys):
    # a computed regression value or a value from memory is not shown as "published"
    table = (Reference("pub", lambda: 1.0, 1.0, 1e-3, "Author 2000, J. X 1 (eq. 2)"),
             Reference("reg", lambda: 1.0, 1.0, 1e-3, "computed (independent dense calculation)"),
             Reference("mem", lambda: 1.0, 1.0, 1e-3, "Author 2001 (value from memory)"),
             Reference("id (ratio)", lambda: 1.0, 1.0, 1e-3, "Author 2002 (exact relation)"))
    assert [r.kind for r in table] == ["published", "computed", "memory", "identity"]
    with pytest.raises(ValueError, match="kind='guess'"):
        Reference("bad", lambda: 1.0, 1.0, 1e-3, "common practice, no source", kind="guess")
    monkeypatch.setattr(validation, "REFERENCES", table)
    assert main(["validate", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [r["kind"] for r in doc["rows"]] == ["published", "computed", "memory", "identity"]
    assert [r["published"] for r in doc["rows"]] == [1.0, None, None, None]
    assert all(r["reference"] == 1.0 for r in doc["rows"])
    assert doc["kinds"] == {"published": 1, "identity": 1, "computed": 1, "memory": 1}
    assert main(["validate"]) == 0
    out = capsys.readouterr().out
    assert out.count("published 1") == 1 and "computed reference 1" in out
    assert "from memory 1" in out and "exact identity 1" in out


def test_every_real_reference_has_a_kind():
    kinds = {r.kind for r in references()}
    assert kinds <= {"published", "identity", "computed", "memory"} and "published" in kinds
    assert all(r.kind == "computed" for r in references() if r.source.startswith("computed"))


@pytest.mark.slow
def test_full_table_passes():
    # Every published reference value (shared/REFERENCES.md; sources in each row), full mode.
    rows = run_validation(references(quick=False))
    failed = [r.to_dict() for r in rows if not r.passed]
    assert not failed, failed
    assert len(rows) > len(references(quick=True))
