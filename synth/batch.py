"""Many requirements files designed in parallel on Dask (``synth batch``).

:func:`run_batch` collects the work, runs one task per loop on a
``dask.distributed`` cluster and writes, into one output folder, each loop's
design JSON (``synth.design/1``, the same document ``synth design --json``
writes), its fit JSON when the plant came from a step test, its report when
asked, and ``summary.json`` (``synth.batch/1``), ``summary.csv`` and
``index.html``.

What is collected.  Every file given, and every ``*.toml`` found
recursively in the folders given.  A folder that holds a ``template.toml``
is a **campaign folder**: the template is a requirements file whose
``[plant.step_test]`` names the ``model`` but no ``data``, and every ``*.csv``
bump test in that folder (not its subfolders) becomes one loop: the template
with ``data`` set to that file (fit, then design).  The template is not
designed on its own.  Files under the output folder are never collected.

Where the work runs.  By default on a ``LocalCluster`` that synth starts
and stops: one worker process per core (or ``workers``), one thread each, so
one design runs per process and nothing is oversubscribed (Dask's nanny also
sets ``OMP_NUM_THREADS=1`` and friends in every worker).  With ``scheduler``
the tasks go to a running ``dask.distributed`` scheduler; its workers must
have synth installed.  The client ships each task the text of its
requirements file and the bytes of its data file, so workers need no shared
file system; they ship back JSON documents (and report files), which the
client writes.

Determinism.  Every task is the library call a single ``synth design``
makes, :func:`synth.design.run_design` on the same problem with its own
``search.seed``; nothing in it depends on the worker, the number of workers
or the order of completion, and the summary lists the loops in the order
they were collected.  So a file gives the same ranking in ``batch`` as in
``design``; only the timing fields (:func:`without_timing`) differ.

Failures.  A file with bad input gets its one-line error in the summary and
exit code 2; a file whose design raises anything else (a bug, or a lost
worker) gets ``exit`` 1, its error line, and the traceback in
``DIR/<name>.error.txt``; the other loops go on in both cases.  The batch's
exit code: 1 when some task hit a bug, else 2 when some file was bad input,
else 3 when some file had no feasible design, else 0.

References
----------
Dask Development Team, *Dask: Library for dynamic task scheduling*, 2016,
https://dask.org (``dask.distributed``: ``LocalCluster``, ``Client.submit``,
``as_completed``).
"""

from __future__ import annotations

import csv
import html
import io
import os
import tempfile
import tomllib
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from synth.errors import InputError, OptionError, SynthError
from synth.outputs.files import check_output_folder, write_json_atomic, write_text_atomic

__all__ = ["BATCH_SCHEMA", "TEMPLATE_NAME", "BatchItem", "BatchResult", "RunRecord",
           "collect", "design_document", "run_batch", "run_item", "without_timing"]

BATCH_SCHEMA = "synth.batch/1"

#: The file that makes a folder a campaign folder.
TEMPLATE_NAME = "template.toml"

#: Fields of a design document that hold wall-clock times (everything else is
#: fixed by the file and its seed).
TIMING_FIELDS = (("search", "search_seconds"), ("search", "family_seconds"))

ProgressFn = Callable[[float, float, str], None]



# ---------------------------------------------------------------------------
# files
# ---------------------------------------------------------------------------

def without_timing(doc: dict) -> dict:
    """A copy of a design document without its wall-clock fields (:data:`TIMING_FIELDS`)."""
    import copy

    out = copy.deepcopy(doc)
    for outer, inner in TIMING_FIELDS:
        if isinstance(out.get(outer), dict):
            out[outer].pop(inner, None)
    return out


# ---------------------------------------------------------------------------
# collecting the work
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class BatchItem:
    """One loop to design, with everything a worker needs (no shared file system).

    Attributes
    ----------
    file : str
        What the summary names: the requirements file, or for a campaign
        loop the CSV file.
    stem : str
        Output name relative to the output folder, without suffix.
    source : str
        The requirements file (the template for a campaign loop).
    text : str or None
        Its text (``None`` when it could not be read; then ``error`` says why).
    data : tuple of (str, bytes)
        Data files the problem may need, by the path the parser resolves.
    csv : str or None
        For a campaign loop, the CSV's path relative to the template's folder.
    error : str or None
        A reading error found while collecting.
    """

    file: str
    stem: str
    source: str
    text: str | None = None
    data: tuple[tuple[str, bytes], ...] = field(default=(), repr=False)
    csv: str | None = None
    error: str | None = None


def _read_text(path: Path) -> tuple[str | None, str | None]:
    try:
        return path.read_bytes().decode("utf-8"), None
    except UnicodeDecodeError:
        return None, f"{path}: is not UTF-8 text"
    except OSError as err:
        return None, f"{path}: cannot be read: {err.strerror or err}"


def _data_files(source: str, text: str | None, csv_name: str | None) -> tuple:
    """The data file a requirements text refers to, read now so the worker need not."""
    from synth.problem.fit import resolve_data_path

    if text is None:
        return ()
    if csv_name is None:
        try:
            doc = tomllib.loads(text)
            ref = doc["plant"]["step_test"]["data"]
        except (tomllib.TOMLDecodeError, KeyError, TypeError):
            return ()  # no data file, or a bad file the worker will report in full
        if not isinstance(ref, str):
            return ()
    else:
        ref = csv_name
    path = resolve_data_path(source, ref)
    try:
        return ((path, Path(path).read_bytes()),)
    except OSError:
        return ()  # the worker reports the missing file with its key


def _inside(path: Path, folder: Path | None) -> bool:
    if folder is None:
        return False
    try:
        path.resolve().relative_to(folder.resolve())
        return True
    except ValueError:
        return False


def collect(paths: Iterable[str | Path], exclude: str | Path | None = None) -> list[BatchItem]:
    """The loops to design, in a fixed order (arguments in order, folders sorted).

    Parameters
    ----------
    paths : iterable of str or Path
        Requirements files and folders.
    exclude : str or Path, optional
        A folder whose files are never collected (the output folder).

    Raises
    ------
    OptionError
        A path that does not exist, or a folder with nothing to design.
    """
    skip = Path(exclude) if exclude is not None else None
    items: list[BatchItem] = []
    seen: set[tuple[str, str | None]] = set()
    stems: set[str] = set()

    def add(file: Path, stem: str, source: Path, csv_name: str | None = None) -> None:
        ident = (str(source.resolve()), str(file.resolve()) if csv_name else None)
        if ident in seen:
            return
        seen.add(ident)
        base, n = stem, 2
        while stem in stems:
            stem = f"{base}-{n}"
            n += 1
        stems.add(stem)
        text, error = _read_text(source)
        items.append(BatchItem(file=str(file), stem=stem, source=str(source), text=text,
                               data=_data_files(str(source), text, csv_name),
                               csv=csv_name, error=error))

    for arg in paths:
        p = Path(arg)
        if p.is_file():
            add(p, p.stem, p)
            continue
        if not p.is_dir():
            raise OptionError(f"{arg}: no such file or folder")
        before = len(items)
        folders = sorted({f.parent for f in p.rglob("*") if f.is_file()} | {p},
                         key=lambda f: f.relative_to(p).as_posix())
        for folder in folders:
            if _inside(folder, skip):
                continue
            rel = folder.relative_to(p)
            if any(part.startswith(".") for part in rel.parts):
                continue  # hidden folders (version control, caches)
            name = p.resolve().name
            prefix = name if rel == Path(".") else f"{name}/{rel.as_posix()}"
            template = folder / TEMPLATE_NAME
            for f in sorted(folder.glob("*.toml")):
                if f.name != TEMPLATE_NAME and f.is_file():
                    add(f, f"{prefix}/{f.stem}", f)
            if template.is_file():
                for c in sorted(folder.glob("*.csv")):
                    if c.is_file():
                        add(c, f"{prefix}/{c.stem}", template, csv_name=c.name)
        if len(items) == before:
            raise OptionError(f"{arg}: no requirements files (*.toml) or campaign folders "
                              f"({TEMPLATE_NAME} with *.csv) found")
    return items


# ---------------------------------------------------------------------------
# one task
# ---------------------------------------------------------------------------

def design_document(problem, progress=None) -> tuple[Any, dict]:
    """Run the design and build the document ``synth design --json`` writes.

    Returns ``(run, doc)``: the :class:`synth.design.DesignRun` and its JSON
    with the implementation forms added (as the ``design`` command does).
    """
    from synth.design import run_design

    run = run_design(problem, progress=progress)
    doc = run.to_json()
    if doc.get("designs"):
        from synth.outputs.implementation import add_implementation_forms

        doc = add_implementation_forms(doc, sample_time=None)
    return run, doc


def _reader(item: BatchItem):
    files = dict(item.data)

    def read(path: str) -> bytes:
        if path in files:
            return files[path]
        raise InputError("no such file", path)

    return read


def _template_problem(item: BatchItem, read):
    from synth.problem.requirements import parse_problem

    src = item.source
    try:
        doc = tomllib.loads(item.text or "")
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", src) from None
    plant = doc.get("plant")
    st = plant.get("step_test") if isinstance(plant, dict) else None
    if not isinstance(st, dict):
        raise InputError("a campaign template needs a [plant.step_test] table with the model "
                         "(and no data)", src, "plant.step_test")
    if "data" in st:
        raise InputError("a campaign template takes no data: each CSV file beside it is one "
                         "loop", src, "plant.step_test.data")
    st["data"] = item.csv
    stem = Path(item.csv or "").stem
    label = plant.get("label")
    if isinstance(label, str) and label:
        plant["label"] = f"{label}: {stem}"
    problem = parse_problem(doc, src, read_data=read)
    return replace(problem, source=item.file), doc


def run_item(item: BatchItem, report: bool = False) -> dict:
    """Design one loop: the task each Dask worker runs.

    Returns a plain dict: ``exit`` (0 feasible, 3 none feasible, 2 bad
    input), ``error`` (one line or None), ``design`` (the design document),
    ``fit`` (the fit document, for step-test plants), ``report`` (file name
    -> bytes, when asked).  Bad input is an answer, not an exception; any
    other exception propagates to the client, which records it.
    """
    out: dict[str, Any] = {"exit": 2, "error": None, "design": None, "fit": None,
                           "report": None}
    try:
        if item.error is not None:
            raise InputError(item.error)
        read = _reader(item)
        if item.csv is not None:
            problem, doc = _template_problem(item, read)
        else:
            from synth.problem.requirements import problem_from_text

            problem = problem_from_text(item.text or "", item.source, read_data=read)
            doc = tomllib.loads(item.text or "")
        st = doc.get("plant", {}).get("step_test")
        if isinstance(st, dict):
            from synth.problem.fit import step_test_fit_from_table

            # the parser fitted this table already; fitting again here (a small cost next
            # to the design) keeps the Problem free of fit bookkeeping
            out["fit"] = step_test_fit_from_table(st, item.source, read).to_json()
        run, design = design_document(problem)
    except SynthError as err:
        out["error"] = str(err)
        return out
    out["design"] = design
    out["exit"] = 0 if run.any_feasible else 3
    if report:
        from synth.design import prepare_report
        from synth.outputs.report.document import write_report

        with tempfile.TemporaryDirectory(prefix="synth-report-") as tmp:
            written = write_report(prepare_report(problem, design, run.explanation), tmp)
            out["report"] = {Path(w).name: Path(w).read_bytes() for w in written}
    return out


# ---------------------------------------------------------------------------
# the result
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class RunRecord:
    """One line of the summary."""

    file: str
    exit: int
    error: str | None
    design_json: str | None
    fit_json: str | None
    report: str | None
    top: dict | None
    time_capped: tuple[str, ...] = ()

    def to_json(self) -> dict:
        return {"file": self.file, "exit": self.exit, "error": self.error,
                "design_json": self.design_json, "top": self.top, "fit_json": self.fit_json,
                "report": self.report, "time_capped": list(self.time_capped)}


@dataclass(frozen=True)
class BatchResult:
    """The outcome of :func:`run_batch`: one record per loop, in collection order."""

    runs: tuple[RunRecord, ...]
    out_dir: str
    workers: str = ""

    @property
    def exit_code(self) -> int:
        codes = {r.exit for r in self.runs}
        for c in (1, 2, 3):
            if c in codes:
                return c
        return 0

    def counts(self) -> dict[str, int]:
        names = {0: "feasible", 3: "no_feasible_design", 2: "bad_input", 1: "internal_error"}
        out = dict.fromkeys(names.values(), 0)
        for r in self.runs:
            out[names[r.exit]] += 1
        return out

    def to_json(self) -> dict:
        """The ``synth.batch/1`` summary: independent of workers and timing."""
        from synth.design import CAUTION
        from synth.outputs.jsonout import clean

        return clean({"schema": BATCH_SCHEMA, "runs": [r.to_json() for r in self.runs],
                      "counts": self.counts(), "caution": CAUTION})

    def csv_text(self) -> str:
        """``summary.csv``: a ``#`` caution line, a header, one row per loop."""
        from synth.design import CAUTION

        metrics = ("overshoot_percent", "settling_time", "phase_margin_deg", "gain_margin_db",
                   "peak_sensitivity", "peak_control_effort")
        buf = io.StringIO()
        buf.write(f"# CAUTION: {CAUTION}\n")
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["file", "exit", "error", "design_json", "fit_json", "report", "feasible",
                    "structure", "compensator", "gain", *metrics])
        for r in self.runs:
            top = r.top or {}
            m = top.get("metrics") or {}
            comp = top.get("compensator") or {}
            w.writerow([r.file, r.exit, r.error or "", r.design_json or "", r.fit_json or "",
                        r.report or "", "" if not top else str(bool(top.get("feasible"))).lower(),
                        top.get("structure", ""), top.get("description", ""),
                        _cell(comp.get("gain")), *(_cell(m.get(k)) for k in metrics)])
        return buf.getvalue()

    def index_html(self) -> str:
        """A small page linking every loop's design JSON, fit JSON and report."""
        from synth.design import CAUTION

        e = html.escape
        status = {0: "feasible", 3: "no feasible design", 2: "bad input", 1: "internal error"}
        rows = []
        for r in self.runs:
            links = []
            for text, href in (("design", r.design_json), ("fit", r.fit_json),
                               ("report", r.report)):
                if href:
                    links.append(f'<a href="{e(href)}">{text}</a>')
            top = r.top or {}
            what = e(top.get("description", "")) if top else e(r.error or "")
            rows.append(f"<tr class=\"s{r.exit}\"><td>{e(r.file)}</td><td>{status[r.exit]}</td>"
                        f"<td>{what}</td><td>{' '.join(links)}</td></tr>")
        c = self.counts()
        return (
            "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<title>synth batch</title><style>"
            "body{font-family:sans-serif;margin:2em;color:#1f2a33}"
            "table{border-collapse:collapse}td,th{padding:.3em .8em;border-bottom:1px solid #e3e8ec;"
            "text-align:left;vertical-align:top}.caution{border-left:4px solid #c4463a;"
            "padding:.5em 1em;background:#fbf1ef}.s2 td:nth-child(2),.s1 td:nth-child(2)"
            "{color:#c4463a}.s3 td:nth-child(2){color:#b07a12}</style></head><body>\n"
            "<h1>Batch design</h1>\n"
            f"<p class=\"caution\"><strong>Read this first.</strong> {e(CAUTION)}</p>\n"
            f"<p>{len(self.runs)} loops: {c['feasible']} feasible, {c['no_feasible_design']} "
            f"without a feasible design, {c['bad_input']} bad input, {c['internal_error']} "
            "internal errors. Summary: <a href=\"summary.json\">summary.json</a>, "
            "<a href=\"summary.csv\">summary.csv</a>.</p>\n"
            "<table><tr><th>loop</th><th>result</th><th>top design or error</th>"
            "<th>files</th></tr>\n" + "\n".join(rows) + "\n</table>\n</body></html>\n")

    def text_lines(self) -> list[str]:
        """One line per loop, the totals and the caution (the terminal account)."""
        from synth.design import CAUTION

        tag = {0: "ok  ", 3: "none", 2: "BAD ", 1: "BUG "}
        lines = []
        for r in self.runs:
            if r.top:
                what = f"{r.file}: {r.top.get('description', r.top.get('structure', ''))}"
            elif r.error and r.error.startswith(r.file):
                what = r.error  # the error line names the file already
            else:
                what = f"{r.file}: {r.error or ''}"
            lines.append(f"{tag[r.exit]} {what}")
        c = self.counts()
        lines.append("")
        n = len(self.runs)
        lines.append(f"{n} loop{'' if n == 1 else 's'}: {c['feasible']} feasible, "
                     f"{c['no_feasible_design']} without a feasible design, {c['bad_input']} "
                     f"bad input, {c['internal_error']} internal errors"
                     + (f" ({self.workers})" if self.workers else ""))
        capped = [r.file for r in self.runs if r.time_capped]
        if capped:
            lines.append(f"time cap reached in {len(capped)} loops (their rankings may differ "
                         "between runs; raise search.time_budget): " + ", ".join(capped))
        lines.append(f"summary written to {Path(self.out_dir) / 'summary.json'}, summary.csv "
                     "and index.html")
        lines.append("")
        lines.append("Caution: " + CAUTION)
        return lines


def _cell(v) -> str:
    if v is None:
        return ""
    return f"{v:.6g}" if isinstance(v, float) else str(v)


def _top(doc: dict | None) -> dict | None:
    if not doc or not doc.get("designs"):
        return None
    d = doc["designs"][0]
    return {"structure": d.get("structure"), "feasible": d.get("feasible"),
            "description": d.get("description"), "compensator": d.get("compensator"),
            "metrics": d.get("metrics")}


def _record(item: BatchItem, res: dict, out: Path) -> RunRecord:
    """Write one loop's files (atomically) and make its summary line."""
    design_rel = fit_rel = report_rel = None
    base = out / item.stem
    base.parent.mkdir(parents=True, exist_ok=True)

    if res.get("design") is not None:
        design_rel = f"{item.stem}.json"
        write_json_atomic(out / design_rel, res["design"])
    if res.get("fit") is not None:
        fit_rel = f"{item.stem}.fit.json"
        write_json_atomic(out / fit_rel, res["fit"])
    if res.get("report"):
        folder = out / f"{item.stem}-report"
        folder.mkdir(parents=True, exist_ok=True)
        for name, data in sorted(res["report"].items()):
            write_text_atomic(folder / name, data)
        main = "report.html" if "report.html" in res["report"] else sorted(res["report"])[0]
        report_rel = f"{item.stem}-report/{main}"
    if res.get("traceback"):
        write_text_atomic(out / f"{item.stem}.error.txt", res["traceback"])
    capped = ((res.get("design") or {}).get("search") or {}).get("time_capped") or ()
    return RunRecord(file=item.file, exit=int(res["exit"]), error=res.get("error"),
                     design_json=design_rel, fit_json=fit_rel, report=report_rel,
                     top=_top(res.get("design")), time_capped=tuple(capped))


# ---------------------------------------------------------------------------
# running on Dask
# ---------------------------------------------------------------------------

def default_workers() -> int:
    """One worker per core this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


def _client(workers: int | None, scheduler: str | None):
    """A connected ``distributed.Client`` and the cluster synth started (or None)."""
    import logging

    from distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            return Client(scheduler, timeout="20s", set_as_default=False), None
        except (OSError, TimeoutError, ValueError) as err:
            raise OptionError(f"--scheduler {scheduler}: cannot connect ({err})") from None
    n = workers or default_workers()
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                           dashboard_address=None, silence_logs=logging.ERROR)
    try:
        return Client(cluster, set_as_default=False), cluster
    except BaseException:
        cluster.close()
        raise


def run_batch(paths: Iterable[str | Path], out_dir: str | Path, *, workers: int | None = None,
              scheduler: str | None = None, report: bool = False,
              progress: ProgressFn | None = None) -> BatchResult:
    """Design every loop in ``paths`` on Dask and write the outputs into ``out_dir``.

    Parameters
    ----------
    paths : iterable of str or Path
        Requirements files and folders (see the module docstring).
    out_dir : str or Path
        Created if missing.  Each loop's files are written as soon as its task
        finishes; the summary files when all have.
    workers : int, optional
        Worker processes of the local cluster (default: one per core).
    scheduler : str, optional
        Address of a running ``dask.distributed`` scheduler instead.
    report : bool
        Also write each loop's HTML and PDF report.
    progress : callable, optional
        ``progress(done, total, label)`` after each finished loop.

    Returns
    -------
    BatchResult

    Raises
    ------
    OptionError
        Bad paths, both ``workers`` and ``scheduler``, an unreachable scheduler.
    """
    if workers is not None and scheduler is not None:
        raise OptionError("give either --workers (a local cluster) or --scheduler, not both")
    if workers is not None and workers < 1:
        raise OptionError(f"--workers {workers}: must be 1 or more")
    out = Path(out_dir)
    check_output_folder(out, "--out")
    items = collect(paths, exclude=out)
    out.mkdir(parents=True, exist_ok=True)
    records: list[RunRecord | None] = [None] * len(items)
    client, cluster = _client(workers, scheduler)
    try:
        from distributed import as_completed

        n_workers = len(client.scheduler_info().get("workers", {}))
        one = n_workers == 1
        where = (f"{n_workers} worker{'' if one else 's'} at {scheduler}" if scheduler
                 else f"{n_workers} local worker process{'' if one else 'es'}")
        futures = [client.submit(run_item, item, report, pure=False) for item in items]
        index = {f.key: i for i, f in enumerate(futures)}
        done = 0
        if progress is not None:
            progress(0, len(items), "")
        for fut in as_completed(futures, loop=client.loop):
            i = index[fut.key]
            try:
                res = fut.result()
            except Exception as err:  # a bug or a lost worker: recorded, the rest go on
                import traceback

                tb = "".join(traceback.format_exception(type(err), err, fut.traceback()))
                res = {"exit": 1, "error": f"internal error ({type(err).__name__}: {err}); "
                       f"please report it with the input file", "traceback": tb}
            records[i] = _record(items[i], res, out)
            fut.release()
            done += 1
            if progress is not None:
                progress(done, len(items), items[i].file)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    result = BatchResult(runs=tuple(r for r in records if r is not None), out_dir=str(out),
                         workers=where)

    write_json_atomic(out / "summary.json", result.to_json())
    write_text_atomic(out / "summary.csv", result.csv_text())
    write_text_atomic(out / "index.html", result.index_html())
    return result
