"""``symbias rank`` at the command line and ``symbias.rank_candidates`` on every engine.

References: the JSON shape and exit status the ranking issue states (a stable machine interface,
``docs/spec-format.md``); the serial run is the reference of the process-pool and Dask runs (the
same seed and chunks must give the same numbers wherever they run); the one-line error rule of
the contributor guide for bad specs and options.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

import symbias
from symbias.cli import main

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = str(ROOT / "examples" / "sensor_bias_spec.toml")
PAIR = ("mos-wide-swing-cascode-mirror", "mos-simple-mirror")
METRIC_NAMES = {"headroom", "rout", "ratio_error", "random_error", "tc", "line_sensitivity", "devices", "area",
                "supply_current"}


def _run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "symbias", "rank", *args], cwd=ROOT, capture_output=True,
                          text=True, timeout=600)


def test_whole_library_json_has_the_stated_shape():
    # the one whole-library run of the suite (no Monte Carlo: its agreement is checked on subsets)
    done = _run(EXAMPLE, "--samples", "0", "--json")
    assert done.returncode == 0, done.stderr[-500:]
    record = json.loads(done.stdout)
    assert set(record) >= {"spec", "candidates", "best"}
    assert record["spec"]["block"]["family"] == "current-mirror"
    ids = [c["id"] for c in record["candidates"]]
    assert len(ids) == len(set(ids)) >= 15 and record["best"] in ids
    ranks = [c["rank"] for c in record["candidates"] if c["feasible"]]
    assert ranks == list(range(1, len(ranks) + 1)) and record["candidates"][0]["id"] == record["best"]
    for candidate in record["candidates"]:
        assert set(candidate) >= {"id", "feasible", "rank", "sizing", "metrics", "violations"}
        assert (candidate["rank"] is None) == (not candidate["feasible"])
        for name, metric in candidate["metrics"].items():
            assert {"value", "unit", "source"} <= set(metric), name
        if candidate["metrics"]:
            assert METRIC_NAMES <= set(candidate["metrics"]), candidate["id"]
            assert candidate["feasible"] == (not candidate["violations"])
        for violation in candidate["violations"]:
            assert {"requirement", "value", "limit"} <= set(violation)
        assert all(isinstance(v, float) for v in candidate["sizing"].values())


def test_table_report_and_plot(tmp_path):
    report, plot = tmp_path / "ranking.md", tmp_path / "tradeoff.png"
    done = _run(EXAMPLE, "--only", *PAIR, "--samples", "300", "--markdown", str(report), "--plot", str(plot))
    assert done.returncode == 0, done.stderr[-500:]
    assert "mos-wide-swing-cascode-mirror meets the spec best" in done.stdout
    assert "rout" in done.stdout and "Why not the others:" in done.stdout and "Traceback" not in done.stderr
    text = report.read_text()
    assert text.startswith("# Ranking against") and "## mos-simple-mirror" in text and "| rout [ohm] |" in text
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ranking.md", "tradeoff.png"]  # no temporary left


def test_impossible_spec_names_the_closest_candidate(tmp_path):
    spec = tmp_path / "impossible.toml"
    spec.write_text(Path(EXAMPLE).read_text().replace('rout_min = "20meg"', 'rout_min = "20T"'))
    done = _run(str(spec), "--only", *PAIR, "--samples", "0")
    assert done.returncode == 1
    assert "no candidate meets the spec; closest: mos-wide-swing-cascode-mirror (rout" in " ".join(done.stdout.split())
    assert "Traceback" not in done.stderr
    error = [line for line in done.stderr.splitlines() if line.strip()]
    assert len(error) == 1 and error[0].startswith(f"{spec}: no candidate meets the spec; closest: "), error


BAD_SPECS = [
    ("unknown-key", ("outputs = 12", "outputs = 12\nspeed = 3"), 11, "unknown key"),
    ("wrong-unit", ('current = "5uA"', 'current = "5uV"'), 8, "wrong unit"),
    ("supply-reversed", ("min = 1.62", "min = 2.5"), 16, "above max"),
    ("toml-syntax", ("outputs = 12", "outputs ="), 10, None),
]


@pytest.mark.parametrize(("change", "line", "cause"), [pytest.param(c, l, w, id=i) for i, c, l, w in BAD_SPECS])
def test_malformed_spec_is_one_line_and_exit_2(tmp_path, capsys, monkeypatch, change, line, cause):
    spec = tmp_path / "bad.toml"
    spec.write_text(Path(EXAMPLE).read_text().replace(*change, 1))
    monkeypatch.chdir(tmp_path)
    assert main(["rank", "bad.toml", "--samples", "0", "--markdown", "out.md"]) == 2
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"bad.toml:{line}: "), captured.err
    assert cause is None or cause in lines[0]
    assert captured.out == "" and "Traceback" not in captured.err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml"]


@pytest.mark.parametrize(("args", "cause"), [
    (["--only", "no-such-topology"], "no topology of that identifier"),
    (["--only", "bjt-widlar-source"], "a current-source, the spec asks for a current-mirror"),
    (["--workers", "0"], "--workers must be at least 1"),
    (["--samples", "-3"], "--samples must be 0 or at least 2"),
    (["--plot", "tradeoff.txt"], "must end in"),
])
def test_bad_options_are_one_line_and_exit_2(capsys, args, cause):
    assert main(["rank", EXAMPLE, "--samples", "0", *args]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and cause in err[0], err


def _comparable(ranking) -> dict:
    record = ranking.to_dict()
    for key in ("seconds", "wall_seconds", "engine"):
        record.pop(key)
    for candidate in record["candidates"]:
        candidate.pop("seconds")
        candidate["metrics"].get("random_error_mc", {}).pop("seconds", None)
    return record


@pytest.fixture(scope="module")
def serial():
    return symbias.rank_candidates(EXAMPLE, only=PAIR, samples=3000, seed=11)


def test_library_api_returns_a_frozen_ranking(serial):
    import dataclasses
    import pickle

    assert isinstance(serial, symbias.Ranking) and serial.best == PAIR[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        serial.best = "x"
    best = serial.candidate(PAIR[0])
    assert best.rank == 1 and best.feasible and best.sizing["IREF"] > 0 and not best.violations
    assert best.metrics["random_error_mc"].detail["samples"] == 3000
    assert _comparable(pickle.loads(pickle.dumps(serial))) == _comparable(serial)
    calls = []
    symbias.rank_candidates(EXAMPLE, only=PAIR[1:], samples=0, progress=lambda *a: calls.append(a))
    assert calls[-1][0] == calls[-1][1] == 1


def test_process_pool_gives_the_serial_ranking(serial):
    pooled = symbias.rank_candidates(EXAMPLE, only=PAIR, samples=3000, seed=11, workers=2)
    assert pooled.engine == "2 local processes"
    assert _comparable(pooled) == _comparable(serial)


def test_dask_cluster_gives_the_serial_ranking(serial):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        on_dask = symbias.rank_candidates(EXAMPLE, only=PAIR, samples=3000, seed=11,
                                          scheduler=cluster.scheduler_address)
    assert on_dask.engine.startswith("Dask cluster at tcp://")
    assert _comparable(on_dask) == _comparable(serial)


def test_seed_changes_the_monte_carlo_only(serial):
    other = symbias.rank_candidates(EXAMPLE, only=PAIR[:1], samples=3000, seed=12)
    first, second = serial.candidate(PAIR[0]).metrics, other.candidate(PAIR[0]).metrics
    assert first["random_error"].value == second["random_error"].value
    assert first["random_error_mc"].value != second["random_error_mc"].value


def test_every_example_of_the_spec_format_reads():
    import re

    from symbias.design.spec import parse_spec

    text = (ROOT / "docs" / "spec-format.md").read_text()
    blocks = re.findall(r"```toml\n(.*?)```", text, re.S)
    assert len(blocks) == 3
    families = {parse_spec(block, "docs/spec-format.md").block.family for block in blocks}
    assert families == {"current-mirror", "current-source", "reference"}
