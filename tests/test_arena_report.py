"""The study report and CSV export, checked against the database read with our own SQL and numpy.

One small study (two lattices, two sizes, two noise models, four settings) is
run once for the module. Its reference is an exact setting whose budget
refuses the size-5 square code, so some points fall back to an approximate
reference and some tasks fail with a reason.
"""

from __future__ import annotations

import csv
import json
import math
import re
import sqlite3

import numpy as np
import pytest
from scipy.stats import binomtest
from tnarena.arena.report import export_csv, pareto_front, write_report
from tnarena.stats import wilson_interval
from tnarena.arena.runner import run_study
from tnarena.arena.store import Store
from tnarena.arena.study import parse_study

STUDY = {
    "title": "report test", "seed": 11, "samples": 5, "trace_memory": 2,
    "codes": [{"family": "surface", "lattices": ["square", "hexagonal"], "sizes": [3, 5]}],
    "noise": [{"model": "bit_flip", "rates": [0.05, 0.12]}, {"model": "phase_flip", "rates": [0.08]}],
    "strategies": [{"name": "sweep", "grid": {"chi": [2, 8]}}, {"name": "exact", "params": {"method": "greedy"}}],
    "reference": {"strategy": "exact", "params": {"method": "greedy", "max_intermediate": 8}},
}
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def study_db(tmp_path_factory, catalog):
    """(database path, report folder, CSV path, rows exported) of the study above."""
    root = tmp_path_factory.mktemp("report")
    db = str(root / "study.db")
    store = Store(db)
    run_study(parse_study(STUDY, catalog), store, catalog, workers=1, progress=None)
    out = root / "report"
    write_report(store, out)
    exported = export_csv(store, root / "tasks.csv")
    store.close()
    return db, out, root / "tasks.csv", exported


# ---- independent recomputation from the database ------------------------------------------------------
def _sql(db: str, query: str, params=()) -> list[sqlite3.Row]:
    con = sqlite3.connect(db)
    con.row_factory = sqlite3.Row
    try:
        return list(con.execute(query, params))
    finally:
        con.close()


def _tasks(db: str, point: str, setting: str) -> dict[int, sqlite3.Row]:
    rows = _sql(db, "SELECT r.* FROM results r JOIN points p ON p.id = r.point_id "
                    "JOIN settings s ON s.id = r.setting_id WHERE p.label = ? AND s.label = ?", (point, setting))
    return {r["instance"]: r for r in rows}


def _reference_label(db: str, point: str) -> str:
    """The reference setting where it finished every instance of the point, else the fallback."""
    ref = _sql(db, "SELECT label FROM settings WHERE reference = 1")[0]["label"]
    fallback = _sql(db, "SELECT label FROM settings WHERE fallback = 1")[0]["label"]
    return ref if all(r["status"] == "ok" for r in _tasks(db, point, ref).values()) else fallback


def _expected(db: str, point: str, setting: str) -> dict[str, float]:
    """Mean and max |ln P - ln P_ref| over classes with a reference value, agreement, failure rate, median ms."""
    mine, ref = _tasks(db, point, setting), _tasks(db, point, _reference_label(db, point))
    ok = [r for r in mine.values() if r["status"] == "ok"]
    errors, agrees = [], []
    for i, r in mine.items():
        if r["status"] != "ok" or ref[i]["status"] != "ok":
            continue
        for a, b in zip(json.loads(r["log_probs"]), json.loads(ref[i]["log_probs"])):
            if b is not None:
                errors.append(math.inf if a is None else abs(a - b))
        agrees.append(r["decision"] == ref[i]["decision"])
    return {"ok": len(ok), "tasks": len(mine), "mean": float(np.mean(errors)), "max": float(np.max(errors)),
            "agree": 100 * float(np.mean(agrees)), "fail": 100 * float(np.mean([r["logical_failure"] for r in ok])),
            "ms": 1e3 * float(np.median([r["contract_seconds"] for r in ok]))}


# ---- reading the report back ------------------------------------------------------------------------
def _section(text: str, heading: str) -> str:
    """Text of the Markdown section whose heading starts with ``heading``, up to the next heading."""
    start = text.index("\n" + heading)
    end = text.find("\n#", start + 1)
    return text[start:end if end != -1 else None]


def _table_row(section: str, setting: str) -> list[str]:
    line = next(ln for ln in section.splitlines() if ln.startswith(f"| {setting} |"))
    return [c.strip() for c in line.strip("|").split("|")]


def _close_as_printed(cell: str, value: float) -> bool:
    """Whether ``value`` rounds to the printed ``cell`` (e.g. '1.48e-02', '80.0%', '3.94').

    In '.2e' format only zero itself prints as '0.00e+00'.
    """
    text = cell.rstrip("%")
    mantissa, _, exponent = text.partition("e")
    if exponent and float(mantissa) == 0:
        return value == 0
    decimals = len(mantissa.partition(".")[2])
    half_digit = 0.5 * 10.0 ** (-decimals) * 10.0 ** int(exponent or 0)
    return abs(float(text) - value) <= half_digit * (1 + 1e-9) + 1e-300


CASES = [  # (point, setting): an exact reference, a non-zero error, an approximate reference, 80% agreement
    ("surface:square:3 bit_flip(0.05)", "sweep(chi=2)"),
    ("surface:square:5 bit_flip(0.05)", "sweep(chi=2)"),
    ("surface:square:5 bit_flip(0.12)", "exact(method=greedy)"),
    ("surface:hexagonal:5 bit_flip(0.12)", "sweep(chi=2)"),
]


@pytest.mark.parametrize(("point", "setting"), CASES)
def test_point_table_numbers_equal_sql_recomputation(study_db, point, setting):
    """Source: the results table read with sqlite3 and reduced with numpy, not via summary.py."""
    db, out, _, _ = study_db
    cells = _table_row(_section((out / "report.md").read_text(), f"### {point}"), setting)
    want = _expected(db, point, setting)
    assert cells[1] == f"{want['ok']}/{want['tasks']}"
    for column, key in ((2, "mean"), (3, "max"), (4, "agree"), (5, "fail"), (6, "ms")):
        assert _close_as_printed(cells[column], want[key]), (column, cells[column], want[key])


def test_approximate_reference_is_flagged_exactly_where_the_reference_failed(study_db):
    """Source: SQL — points where the reference setting has a failed task must carry the flag."""
    db, out, _, _ = study_db
    text = (out / "report.md").read_text()
    failed = {r["label"] for r in _sql(db, "SELECT DISTINCT p.label FROM results r JOIN points p ON p.id = r.point_id "
                                           "JOIN settings s ON s.id = r.setting_id "
                                           "WHERE s.reference = 1 AND r.status = 'failed'")}
    assert failed, "the study is meant to have points with an approximate reference"
    for point in (r["label"] for r in _sql(db, "SELECT label FROM points")):
        assert ("APPROXIMATE reference" in _section(text, f"### {point}")) == (point in failed), point


def test_failures_are_listed_with_their_reasons(study_db):
    """Source: SQL — every (point, setting, reason) of a failed task, with its count, in the Failures table."""
    db, out, _, _ = study_db
    failures = _section((out / "report.md").read_text(), "## Failures")
    rows = _sql(db, "SELECT p.label AS point, s.label AS setting, r.reason, COUNT(*) AS n, "
                    "(SELECT COUNT(*) FROM results q WHERE q.point_id = r.point_id AND q.setting_id = r.setting_id) "
                    "AS total FROM results r JOIN points p ON p.id = r.point_id JOIN settings s ON s.id = r.setting_id "
                    "WHERE r.status = 'failed' GROUP BY r.point_id, r.setting_id, r.reason")
    assert rows
    for r in rows:
        assert f"| {r['point']} | {r['setting']} | {r['n']}/{r['total']} | {r['reason']} |" in failures


def test_report_links_one_existing_file_per_plot(study_db):
    """Every image link in report.md is relative and exists; each (family, lattice, model) in SQL has three."""
    db, out, _, _ = study_db
    links = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", (out / "report.md").read_text())
    groups = _sql(db, "SELECT DISTINCT family, lattice, model, options FROM points")
    assert len(links) == len(set(links)) == 3 * len(groups)
    assert all("/" not in link and (out / link).is_file() for link in links)
    assert sorted(links) == sorted(p.name for p in out.glob("*.png"))


def test_plots_are_valid_png_images(study_db):
    """PNG signature (RFC 2083, section 3.1); Pillow opens and verifies each; matplotlib reads an RGB(A) array."""
    from matplotlib.image import imread
    from PIL import Image

    _, out, _, _ = study_db
    pngs = sorted(out.glob("*.png"))
    assert pngs
    for path in pngs:
        assert path.read_bytes()[:8] == PNG_SIGNATURE
        with Image.open(path) as img:
            img.verify()
        pixels = imread(path)
        assert pixels.ndim == 3 and pixels.shape[2] in (3, 4)
        assert pixels.shape[0] > 200 and pixels.shape[1] > 300
        assert np.std(pixels[..., :3]) > 0.01, f"{path.name} is blank"


def test_pareto_front_in_caption_equals_brute_force_from_sql(study_db):
    """Source: SQL + numpy — pooled median ms and mean |dlnP| per size, front found by all-pairs comparison."""
    db, out, _, _ = study_db
    section = _section((out / "report.md").read_text(), "### surface code, square lattice, bit_flip noise")
    listed = re.search(r"Pareto front: (.*?)\.\*", section).group(1)
    for part in listed.split("; "):
        size, names = part.removeprefix("size ").split(": ")
        points = [r["label"] for r in _sql(db, "SELECT label FROM points WHERE lattice = 'square' AND "
                                               "model = 'bit_flip' AND size = ?", (int(size),))]
        settings = [r["label"] for r in _sql(db, "SELECT label FROM settings ORDER BY id")]
        stats = {s: _pooled(db, points, s) for s in settings}
        stats = {s: v for s, v in stats.items() if v is not None and math.isfinite(v[1])}  # inf: not drawn
        front = {s for s, (t, e) in stats.items()
                 if not any(t2 <= t and e2 <= e and (t2 < t or e2 < e) for t2, e2 in stats.values())}
        assert set(names.split(", ")) == front, size


def _pooled(db: str, points: list[str], setting: str) -> tuple[float, float] | None:
    times, errors = [], []
    for point in points:
        mine, ref = _tasks(db, point, setting), _tasks(db, point, _reference_label(db, point))
        for i, r in mine.items():
            if r["status"] != "ok":
                continue
            times.append(r["contract_seconds"])
            if ref[i]["status"] == "ok":
                errors += [math.inf if a is None else abs(a - b)
                           for a, b in zip(json.loads(r["log_probs"]), json.loads(ref[i]["log_probs"])) if b is not None]
    return (float(np.median(times)), float(np.mean(errors))) if times else None


def test_csv_has_one_row_per_result_with_the_stored_values(study_db):
    """Source: SQL — row count of the results table; status, decision, time and log-probs of every row."""
    db, _, path, exported = study_db
    with path.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    count = _sql(db, "SELECT COUNT(*) AS n FROM results")[0]["n"]
    assert exported == len(rows) == count
    stored = {(r["point"], r["setting"], r["instance"]): r for r in _sql(
        db, "SELECT p.label AS point, s.label AS setting, r.* FROM results r JOIN points p ON p.id = r.point_id "
            "JOIN settings s ON s.id = r.setting_id")}
    for row in rows:
        want = stored[(row["point"], row["setting"], int(row["instance"]))]
        assert row["status"] == want["status"]
        assert row["decision"] == (want["decision"] or "")
        if want["status"] == "ok":
            assert float(row["contract_seconds"]) == want["contract_seconds"]
            assert json.loads(row["log_probs"]) == json.loads(want["log_probs"])


def test_report_of_an_empty_database_says_so(tmp_path):
    """A database with no results yet gives a report that says so, and no plots."""
    path = write_report(Store(str(tmp_path / "empty.db")), tmp_path / "out")
    assert "no results yet" in path.read_text()
    assert not list((tmp_path / "out").glob("*.png"))


@pytest.mark.parametrize(("successes", "trials"), [(0, 5), (3, 10), (5, 5), (17, 40), (1, 1000), (250, 500)])
def test_wilson_interval_matches_scipy(successes, trials):
    """Source: scipy.stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method='wilson')."""
    want = binomtest(successes, trials).proportion_ci(confidence_level=0.95, method="wilson")
    low, high = wilson_interval(successes, trials)
    assert low == pytest.approx(want.low, abs=1e-12)
    assert high == pytest.approx(want.high, abs=1e-12)


def test_wilson_interval_refuses_impossible_counts():
    with pytest.raises(ValueError, match="6 of 5"):
        wilson_interval(6, 5)


def test_pareto_front_on_a_hand_worked_example():
    """By hand: (3, 4) is beaten by (2, 3); the two equal (2, 3) points beat neither each other nor the rest."""
    times = [1.0, 2.0, 3.0, 4.0, 2.0]
    errors = [5.0, 3.0, 4.0, 1.0, 3.0]
    assert pareto_front(times, errors).tolist() == [True, True, False, True, True]
