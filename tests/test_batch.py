"""synth batch on Dask: results independent of workers and scheduler, equal to synth design.

References: the contract (/work/shared/contract.md, "Extensions, second round":
``synth.batch/1``, batch exit codes, "a file gives the same ranking in batch
as in design"); ``synth design --json`` run on each file alone is the
reference for every design document batch writes; dask.distributed's own
scheduler and worker programs (``python -m distributed.cli.dask_scheduler``
and ``dask_worker``) stand in for a cluster.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from synth.batch import BatchResult, RunRecord, collect, without_timing

ROOT = Path(__file__).resolve().parent.parent

QUICK = {
    "lag.toml": """
[plant]
expression = "1/((s + 1)*(0.5*s + 1))"
[requirements]
min_phase_margin_deg = 45.0
max_peak_sensitivity = 1.6
[search]
structures = ["P", "PI"]
seed = 3
keep = 3
time_budget = 60.0
""",
    "motor.toml": """
[plant]
expression = "2/(s*(s + 4))"
[requirements]
max_overshoot_percent = 10.0
[search]
structures = ["P", "PD"]
seed = 4
keep = 3
time_budget = 60.0
""",
    # no proportional gain removes the steady-state error of a type-0 plant: no feasible design
    "offset.toml": """
[plant]
expression = "1/(s + 1)^3"
[requirements]
max_steady_state_error = 0.0
[search]
structures = ["P"]
keep = 2
time_budget = 60.0
""",
    "broken.toml": """
[plant]
expression = "1/(s + 1"
""",
}

TEMPLATE = """
[plant]
label = "tank"
[plant.step_test]
model = "first-order"
[requirements]
min_phase_margin_deg = 45.0
[search]
structures = ["PI"]
seed = 2
keep = 2
time_budget = 60.0
"""


def run_synth(*args, cwd=ROOT, timeout=600):
    return subprocess.run([sys.executable, "-m", "synth.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=timeout)


def _bump_csv(path: Path) -> None:
    """A first-order bump test: exact response of 0.8 exp(-2 s)/(10 s + 1) to a step at 5 s."""
    rng = np.random.default_rng(5)
    t = np.arange(0.0, 80.0, 0.25)
    u = np.where(t >= 5.0, 3.0, 0.0)
    y = np.where(t >= 7.0, 0.8 * 3.0 * (1.0 - np.exp(-(t - 7.0) / 10.0)), 0.0)
    y = y + 0.01 * rng.standard_normal(t.size)
    path.write_text("time,input,output\n" + "".join(
        f"{a!r},{b!r},{c!r}\n" for a, b, c in zip(t.tolist(), u.tolist(), y.tolist(),
                                                  strict=True)))


@pytest.fixture(scope="module")
def loops(tmp_path_factory):
    """A folder of quick loops: three files, one broken file, one campaign folder."""
    base = tmp_path_factory.mktemp("batch")
    folder = base / "loops"
    folder.mkdir()
    for name, text in QUICK.items():
        (folder / name).write_text(text)
    camp = folder / "tanks"
    camp.mkdir()
    (camp / "template.toml").write_text(TEMPLATE)
    _bump_csv(camp / "tank-a.csv")
    return base


@pytest.fixture(scope="module")
def batch_two_workers(loops):
    out = loops / "out-2"
    res = run_synth("batch", str(loops / "loops"), "--out", str(out), "--workers", "2")
    return res, out


def _summary(out: Path) -> dict:
    return json.loads((out / "summary.json").read_text())


def _designs(out: Path) -> dict:
    s = _summary(out)
    return {r["file"]: without_timing(json.loads((out / r["design_json"]).read_text()))
            for r in s["runs"] if r["design_json"]}


def test_summary_lists_every_loop_and_exit_code(loops, batch_two_workers):
    res, out = batch_two_workers
    # a bad file makes the batch exit 2 (contract), and never stops the others
    assert res.returncode == 2, res.stderr
    assert "Traceback" not in res.stderr
    s = _summary(out)
    assert s["schema"] == "synth.batch/1"
    by_file = {Path(r["file"]).name: r for r in s["runs"]}
    assert set(by_file) == {"lag.toml", "motor.toml", "offset.toml", "broken.toml", "tank-a.csv"}
    assert by_file["broken.toml"]["exit"] == 2
    assert "broken.toml" in by_file["broken.toml"]["error"]
    assert "plant.expression" in by_file["broken.toml"]["error"]
    assert by_file["broken.toml"]["design_json"] is None
    assert by_file["offset.toml"]["exit"] == 3
    for name in ("lag.toml", "motor.toml", "tank-a.csv"):
        r = by_file[name]
        assert r["exit"] == 0 and r["error"] is None
        assert r["top"]["structure"] and r["top"]["compensator"]["numerator"]
        assert (out / r["design_json"]).is_file()
    # the campaign loop was fitted, and its fit is written beside its design
    fit = json.loads((out / by_file["tank-a.csv"]["fit_json"]).read_text())
    assert fit["schema"] == "synth.fit/1"
    assert abs(fit["parameters"]["gain"] - 0.8) <= 4 * fit["standard_errors"]["gain"]
    # the CSV and the index carry the cautions
    csv_text = (out / "summary.csv").read_text()
    assert csv_text.startswith("# CAUTION:") and "functional-safety" in csv_text
    assert csv_text.count("\n") == 2 + len(s["runs"])
    index = (out / "index.html").read_text()
    assert "functional-safety" in index and "summary.json" in index


def test_batch_equals_single_design_runs(loops, batch_two_workers):
    _, out = batch_two_workers
    got = _designs(out)
    ref_dir = loops / "single"
    ref_dir.mkdir()
    # the campaign loop as a single file: the template with the data named
    single = loops / "loops" / "tanks" / "tank-a.toml"
    single.write_text(TEMPLATE.replace('model = "first-order"',
                                       'model = "first-order"\ndata = "tank-a.csv"')
                      .replace('label = "tank"', 'label = "tank: tank-a"'))
    try:
        for name, target in (("lag.toml", "lag.toml"), ("motor.toml", "motor.toml"),
                             ("offset.toml", "offset.toml"), ("tanks/tank-a.toml", "tank-a.csv")):
            path = loops / "loops" / name
            res = run_synth("design", str(path), "--json", str(ref_dir / "d.json"))
            assert res.returncode in (0, 3), res.stderr
            ref = without_timing(json.loads((ref_dir / "d.json").read_text()))
            key = next(k for k in got if Path(k).name == target)
            mine = got[key]
            if target.endswith(".csv"):  # the single file names itself; batch names the CSV
                ref.pop("source")
                mine.pop("source")
            assert mine == ref, name
    finally:
        single.unlink()


def test_one_worker_and_a_separate_scheduler_give_identical_results(loops, batch_two_workers,
                                                                    tmp_path):
    _, out2 = batch_two_workers
    out1 = loops / "out-1"
    res = run_synth("batch", str(loops / "loops"), "--out", str(out1), "--workers", "1")
    assert res.returncode == 2, res.stderr
    assert _summary(out1) == _summary(out2)
    assert _designs(out1) == _designs(out2)

    # a scheduler and a worker started as separate processes, as on a cluster
    sched_file = tmp_path / "scheduler.json"
    procs = []
    try:
        procs.append(subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1",
             "--port", "0", "--no-dashboard", "--scheduler-file", str(sched_file)],
            cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL))
        # everything listens on the loopback address only
        for _ in range(600):  # wait for the scheduler file (bounded, no timing assertion)
            if sched_file.is_file() and sched_file.stat().st_size:
                break
            time.sleep(0.1)
        address = json.loads(sched_file.read_text())["address"]
        procs.append(subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_worker", address, "--host", "127.0.0.1",
             "--nthreads", "1", "--nworkers", "1", "--no-dashboard", "--no-nanny"],
            cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL))
        out3 = loops / "out-sched"
        res = run_synth("batch", str(loops / "loops"), "--out", str(out3), "--scheduler",
                        address)
        assert res.returncode == 2, res.stderr
        assert _summary(out3) == _summary(out2)
        assert _designs(out3) == _designs(out2)
    finally:
        for p in reversed(procs):
            p.terminate()
        for p in procs:
            try:
                p.wait(timeout=30)
            except subprocess.TimeoutExpired:
                p.kill()


def test_collect_campaign_folders_and_output_folder(tmp_path):
    (tmp_path / "a").mkdir()
    (tmp_path / "a" / "x.toml").write_text("")
    (tmp_path / "a" / "template.toml").write_text("")
    (tmp_path / "a" / "p.csv").write_text("")
    (tmp_path / "a" / "q.csv").write_text("")
    (tmp_path / "a" / "out").mkdir()
    (tmp_path / "a" / "out" / "summary.csv").write_text("")
    (tmp_path / "a" / ".git").mkdir()
    (tmp_path / "a" / ".git" / "h.toml").write_text("")
    items = collect([tmp_path / "a"], exclude=tmp_path / "a" / "out")
    assert [(Path(i.file).name, i.csv, i.stem) for i in items] == [
        ("x.toml", None, "a/x"), ("p.csv", "p.csv", "a/p"), ("q.csv", "q.csv", "a/q")]
    assert all(Path(i.source).name == "template.toml" for i in items[1:])


def test_exit_code_precedence():
    # contract: 0 all feasible, 3 some had none, 2 some bad input; a bug (1) outranks all
    def result(*codes):
        return BatchResult(runs=tuple(RunRecord(f"f{i}", c, None, None, None, None, None)
                                      for i, c in enumerate(codes)), out_dir=".")

    assert result(0, 0).exit_code == 0
    assert result(0, 3).exit_code == 3
    assert result(3, 2, 0).exit_code == 2
    assert result(2, 1).exit_code == 1


def test_bad_options_one_line_exit_2(tmp_path):
    res = run_synth("batch", str(tmp_path / "nothing-here"), "--out", str(tmp_path / "o"))
    assert res.returncode == 2
    assert len(res.stderr.strip().splitlines()) == 1 and "no such file or folder" in res.stderr
    (tmp_path / "empty").mkdir()
    res = run_synth("batch", str(tmp_path / "empty"), "--out", str(tmp_path / "o"),
                    "--workers", "1")
    assert res.returncode == 2 and "no requirements files" in res.stderr
    res = run_synth("batch", str(tmp_path), "--out", str(tmp_path / "o"), "--workers", "1",
                    "--scheduler", "tcp://127.0.0.1:1")
    assert res.returncode == 2 and "not both" in res.stderr


def test_a_bug_in_a_task_propagates(monkeypatch, tmp_path):
    # bad input is an answer (exit 2); anything else is a bug and must not be swallowed by the
    # task: it reaches the client, which records it (exit 1, traceback file) and goes on
    import synth.batch as batch

    f = tmp_path / "lag.toml"
    f.write_text(QUICK["lag.toml"])
    (item,) = collect([f])

    def broken(problem, progress=None):
        raise ZeroDivisionError("injected")

    monkeypatch.setattr(batch, "design_document", broken)
    with pytest.raises(ZeroDivisionError):
        batch.run_item(item)
    bad = batch.BatchItem(file="x.toml", stem="x", source="x.toml", text="[plant]\n")
    assert batch.run_item(bad)["exit"] == 2
