"""The ``synth`` command line: parses options, calls the library, prints.

Every command's work is a library call (see ``docs/python-api.md``); this
module only formats.  Heavy libraries (cvxpy, matplotlib, scipy's optimisers)
are imported inside the commands so that ``synth --help`` starts fast.

Errors a user can cause (bad file, bad option) end as one line on standard
error and exit code 2; ``design`` exits 3 when the run completed but no design
meets every requirement, ``frontier`` when no structure has a feasible design
at any level.
"""

from __future__ import annotations

import os
import signal
import sys
from contextlib import contextmanager

import typer

from synth.errors import InputError, OptionError, SynthError, Terminated, one_line
from synth.outputs.files import check_output_file, check_output_folder

EXIT_BAD_INPUT = 2
EXIT_NO_FEASIBLE = 3

app = typer.Typer(
    name="synth",
    help="Controller synthesis assistant: proportional-gain facts, root loci, compensator "
    "design with verification and ranking, comparison of runs.",
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


# -- output helpers ----------------------------------------------------------------------------

def _echo_lines(lines) -> None:
    for line in lines:
        typer.echo(line)


class _Interrupted(Exception):
    """An interrupt after the command's own cleanup ran: the signal and what was written."""

    def __init__(self, signum: int, written: tuple[str, ...]):
        super().__init__(signum)
        self.signum = signum
        self.written = written


@contextmanager
def _interruptible(written: list[str]):
    """Turn an interrupt inside a command into :class:`_Interrupted` with the files written.

    Temporary files are gone by the time the interrupt reaches here (the
    writers' ``finally`` blocks ran); converting it to an ordinary exception
    keeps click from printing a blank line of its own.
    """
    try:
        yield
    except KeyboardInterrupt as err:
        signum = getattr(err, "signum", signal.SIGINT)
        done = [*written, *(w for w in getattr(err, "written", ()) if w not in written)]
        raise _Interrupted(signum, tuple(done)) from None


def _write_json(path: str, doc: dict, written: list[str]) -> None:
    from synth.outputs.files import write_json_atomic

    write_json_atomic(path, doc, "--json")
    written.append(path)


@contextmanager
def _about(problem):
    """Name the requirements file in errors raised while working on its problem."""
    try:
        yield
    except InputError as err:
        if err.source is None:
            raise InputError(err.message, problem.source, err.key or "plant") from None
        raise


def _load(file: str):
    from synth.problem.requirements import load_problem

    return load_problem(file)


# -- commands ----------------------------------------------------------------------------------

@app.command()
def explain(
    file: str = typer.Argument(..., metavar="FILE", help="Requirements file (TOML)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.explain/1 JSON here."),
) -> None:
    """What proportional gain alone can and cannot do for the plant, and why."""
    check_output_file(json_out, "--json")
    written: list[str] = []
    with _interruptible(written):
        problem = _load(file)
        from synth.explain import explain_problem

        with _about(problem):
            result = explain_problem(problem)
        doc = result.to_json()
        _echo_lines(result.text_lines())
        if json_out:
            _write_json(json_out, doc, written)


def _split_design_ref(ref: str, what: str = "--design") -> tuple[str, int]:
    path, rank = ref, 1
    head, sep, tail = ref.rpartition(":")
    if sep and tail.isdigit() and head:
        path, rank = head, int(tail)
    if rank < 1:
        raise OptionError(f"{what} {ref}: the rank must be 1 or more")
    return path, rank


@app.command()
def trace(
    file: str = typer.Argument(..., metavar="FILE", help="Requirements file (TOML)."),
    design: str | None = typer.Option(
        None, "--design", help="Trace the loop of a design: DESIGN_JSON[:RANK] (rank 1 by default)."),
    plot: str | None = typer.Option(None, "--plot", help="Write the picture (.png or .svg)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.trace/1 JSON here."),
) -> None:
    """The root locus of the plant, or of a chosen design's loop, with its special points."""
    check_output_file(plot, "--plot", (".png", ".svg"))
    check_output_file(json_out, "--json")
    written: list[str] = []
    with _interruptible(written):
        problem = _load(file)
        from synth.locus import trace_design_loop, trace_problem

        if design:
            path, rank = _split_design_ref(design)
            from synth.outputs.document import load_design

            document = load_design(path)
            chosen, plant = document.design(rank), document.need_plant()
            try:
                result, operating_gain = trace_design_loop(
                    problem, plant.numerator, plant.denominator, chosen.compensator.num,
                    chosen.compensator.den)
            except InputError as err:
                raise InputError(f"design {rank}: {err.message}", path,
                                 f"designs[{chosen.index}].{err.key}") from None
        else:
            with _about(problem):
                result, operating_gain = trace_problem(problem), None
        doc = result.to_json()
        if operating_gain is not None:
            doc["operating_gain"] = operating_gain
        zlocus = None
        if problem.sampling is not None:
            # the controller runs sampled: the locus in z as well (the s-plane results stay)
            from synth.locus.zplane import trace_zplane

            if design:
                from synth.outputs.export import discrete_model

                form = document.discrete_form(chosen)
                model = discrete_model(document, chosen) if form else None
                with _about(problem):
                    zlocus = trace_zplane(problem, document.controller(chosen), model)
            else:
                with _about(problem):
                    zlocus = trace_zplane(problem)
            doc["z_plane"] = zlocus.to_json()
        _echo_lines(result.summary_lines())
        if zlocus is not None:
            _echo_lines(zlocus.summary_lines())
        if operating_gain is not None:
            typer.echo(f"design {rank} operates at gain {operating_gain:.6g}")
        if plot:
            if zlocus is not None:
                from synth.outputs.report.zlocus_plot import plot_zlocus

                plot_zlocus(zlocus, plot, operating_gain=operating_gain,
                            title=problem.plant.label or None)
            else:
                from synth.outputs.report.locus_plot import plot_locus

                plot_locus(result, plot, region=problem.region,
                           operating_gain=operating_gain,
                           title=problem.plant.label or None)
            written.append(plot)
            typer.echo(f"picture written to {plot}")
        if json_out:
            _write_json(json_out, doc, written)


@app.command()
def design(
    file: str = typer.Argument(..., metavar="FILE", help="Requirements file (TOML)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.design/1 JSON here."),
    report: str | None = typer.Option(None, "--report", help="Write an HTML and PDF report into this folder."),
    sample_time: float | None = typer.Option(
        None, "--sample-time", help="Also give each design in discrete time (Tustin, seconds)."),
) -> None:
    """Search compensator structures, verify every candidate, rank the feasible designs."""
    check_output_file(json_out, "--json")
    if sample_time is not None and not (sample_time > 0 and sample_time < 1e6):
        raise OptionError(f"--sample-time {sample_time:g}: must be a positive number of seconds")
    check_output_folder(report, "--report")
    written: list[str] = []
    with _interruptible(written):
        problem = _load(file)
        from synth.design import run_design
        from synth.outputs.progress import terminal_progress

        with _about(problem), terminal_progress("searching") as progress:
            run = run_design(problem, progress=progress)
        doc = run.to_json()
        from synth.outputs.run import design_text
        from synth.outputs.text import show

        show(design_text(run))
        if sample_time is not None or doc.get("designs"):
            from synth.outputs.implementation import add_implementation_forms, implementation_lines

            doc = add_implementation_forms(doc, sample_time=sample_time)
            _echo_lines(implementation_lines(doc, sample_time=sample_time))
        if json_out:
            _write_json(json_out, doc, written)
        if report:
            from synth.design import prepare_report
            from synth.outputs.report.document import write_report

            for path in write_report(prepare_report(problem, doc, run.explanation), report):
                written.append(str(path))
                typer.echo(f"report written to {path}")
    if not run.any_feasible:
        raise typer.Exit(EXIT_NO_FEASIBLE)


@app.command()
def frontier(
    file: str = typer.Argument(..., metavar="FILE", help="Requirements file (TOML)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.frontier/1 JSON here."),
    plot: str | None = typer.Option(None, "--plot", help="Draw the frontier (.png or .svg)."),
    levels: str | None = typer.Option(
        None, "--levels", help="Peak-sensitivity levels, comma-separated, increasing "
        "(default 1.2,1.4,1.6,1.8,2.0)."),
) -> None:
    """Best objective value per structure as the Ms limit moves, and what relaxing each binding requirement buys."""
    from synth.frontier import parse_levels

    chosen = parse_levels(levels) if levels is not None else None
    check_output_file(json_out, "--json")
    check_output_file(plot, "--plot", (".png", ".svg"))
    written: list[str] = []
    with _interruptible(written):
        problem = _load(file)
        from synth.frontier import run_frontier
        from synth.outputs.progress import terminal_progress
        from synth.outputs.text import show

        with _about(problem), terminal_progress("frontier") as progress:
            result = run_frontier(problem, levels=chosen, progress=progress)
        show(result.text())
        doc = result.to_json()
        if json_out:
            _write_json(json_out, doc, written)
        if plot:
            from synth.outputs.report.frontier_plot import plot_frontier

            plot_frontier(doc, plot)
            written.append(plot)
            typer.echo(f"picture written to {plot}")
    if not result.any_feasible:
        raise typer.Exit(EXIT_NO_FEASIBLE)


@app.command()
def compare(
    files: list[str] = typer.Argument(..., metavar="DESIGN_JSON...", help="Two or more design JSON files (synth.design/1)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.compare/1 JSON here."),
    plot: str | None = typer.Option(None, "--plot", help="Overlay the top designs' step responses (.png or .svg)."),
) -> None:
    """Rankings and metrics of several design runs side by side."""
    if len(files) < 2:
        raise OptionError("compare needs at least two design JSON files")
    check_output_file(json_out, "--json")
    check_output_file(plot, "--plot", (".png", ".svg"))
    written: list[str] = []
    with _interruptible(written):
        from synth.outputs.compare import compare_runs
        from synth.outputs.document import load_design
        from synth.outputs.text import show

        runs = [(f, load_design(f)) for f in files]
        result = compare_runs(runs)
        show(result.text())
        if json_out:
            _write_json(json_out, result.to_json(), written)
        if plot:
            from synth.outputs.report.compare_plot import plot_step_overlay

            plot_step_overlay(runs, plot)
            written.append(plot)
            typer.echo(f"picture written to {plot}")


@app.command()
def fit(
    data: str = typer.Argument(..., metavar="DATA.csv", help="Step-test data: CSV with columns time,input,output."),
    model: str = typer.Option(..., "--model", help="first-order, second-order or integrating (each with dead time)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.fit/1 JSON here."),
    plot: str | None = typer.Option(None, "--plot", help="Draw data, fit and residual (.png or .svg)."),
    write_requirements: str | None = typer.Option(
        None, "--write-requirements", help="Write a requirements file (.toml) to start from."),
) -> None:
    """Fit a plant model with dead time to recorded step-test data."""
    from synth.problem.fit import MODELS

    if model not in MODELS:
        raise OptionError(f"--model {model}: choose from {', '.join(MODELS)}")
    check_output_file(json_out, "--json")
    check_output_file(plot, "--plot", (".png", ".svg"))
    check_output_file(write_requirements, "--write-requirements", (".toml",))
    written: list[str] = []
    with _interruptible(written):
        from synth.problem.fit import fit_step_test, requirements_skeleton

        result = fit_step_test(data, model)
        _echo_lines(result.text_lines())
        if json_out:
            _write_json(json_out, result.to_json(), written)
        if plot:
            from synth.outputs.report.fit_plot import plot_fit

            plot_fit(result, plot)
            written.append(plot)
            typer.echo(f"picture written to {plot}")
        if write_requirements:
            from pathlib import Path

            from synth.outputs.files import write_text_atomic

            folder = Path(write_requirements).parent
            ref = Path(os.path.relpath(Path(data).resolve(), folder.resolve())).as_posix()
            write_text_atomic(write_requirements, requirements_skeleton(result, data_ref=ref),
                              "--write-requirements")
            written.append(write_requirements)
            typer.echo(f"requirements file written to {write_requirements}")


@app.command()
def export(
    run: str = typer.Argument(..., metavar="RUN.json[:RANK]", help="A design JSON file (synth.design/1) and the design's rank (1 by default)."),
    language: str = typer.Option("c", "--language", help="c (C99: NAME.h, NAME.c) or st (IEC 61131-3 Structured Text: NAME.st)."),
    name: str = typer.Option("controller", "--name", help="Name of the files, the state struct and the functions (or the function block)."),
    out: str = typer.Option(..., "--out", help="Folder for the code and NAME_vectors.csv."),
) -> None:
    """Firmware hand-over: the chosen design's discrete controller as code, with test vectors."""
    from synth.outputs.export import check_name

    check_name(name, language)
    path, rank = _split_design_ref(run, "RUN.json")
    check_output_folder(out, "--out")
    written: list[str] = []
    with _interruptible(written):
        from pathlib import Path

        from synth.outputs.document import load_design
        from synth.outputs.export import export_design
        from synth.outputs.files import atomic_folder

        result = export_design(load_design(path), rank, language, name)
        with atomic_folder(out, "--out") as staging:
            for filename, text in result.files:
                (staging / filename).write_text(text, encoding="utf-8")
        for filename, _ in result.files:
            written.append(str(Path(out) / filename))
        _echo_lines(result.summary)
        typer.echo("written: " + ", ".join(written))


@contextmanager
def _batch_progress(title: str):
    """A rich progress bar counting finished files on standard error; None when piped."""
    if not sys.stderr.isatty():
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    with Progress(TextColumn(title), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                  TextColumn("{task.description}"), console=Console(stderr=True),
                  transient=True) as bar:
        task = bar.add_task("", total=None)

        def update(done: float, total: float, label: str = "") -> None:
            bar.update(task, completed=done, total=total, description=label[-48:])

        yield update


@app.command()
def batch(
    paths: list[str] = typer.Argument(..., metavar="PATH...", help="Requirements files and folders of them (searched recursively)."),
    out: str = typer.Option(..., "--out", help="Folder for the per-file outputs and the summary."),
    workers: int | None = typer.Option(None, "--workers", help="Worker processes of the local Dask cluster (default: one per core)."),
    scheduler: str | None = typer.Option(None, "--scheduler", help="Address of a running Dask scheduler to use instead."),
    report: bool = typer.Option(False, "--report", help="Also write each file's HTML and PDF report."),
) -> None:
    """Design many requirements files in parallel on Dask; per-file outputs and a summary."""
    check_output_folder(out, "--out")
    written: list[str] = []
    with _interruptible(written):
        from synth.batch import run_batch

        with _batch_progress("designing") as progress:
            result = run_batch(paths, out, workers=workers, scheduler=scheduler, report=report,
                               progress=progress)
        _echo_lines(result.text_lines())
    if result.exit_code:
        raise typer.Exit(result.exit_code)


# -- entry point -------------------------------------------------------------------------------

def _raise_on_signal(signum, _frame):
    """SIGINT/SIGTERM handler: ignore further signals (cleanup runs undisturbed), then raise."""
    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, signal.SIG_IGN)
    if signum == signal.SIGTERM:
        raise Terminated(signum)
    raise KeyboardInterrupt


def _unraisable(hook_args) -> None:
    """Keep an interrupt that landed in a finaliser (``__del__``) from being swallowed.

    Python prints "Exception ignored" for it and carries on as if nothing
    happened; instead the signal is sent again, so it is raised where the
    program can act on it. Anything else goes to the default hook.
    """
    exc = hook_args.exc_value
    if isinstance(exc, KeyboardInterrupt):
        for sig in (signal.SIGINT, signal.SIGTERM):
            signal.signal(sig, _raise_on_signal)
        signal.raise_signal(getattr(exc, "signum", signal.SIGINT))
        return
    sys.__unraisablehook__(hook_args)


def _say(message: str) -> None:
    """One line on standard error (escaped), even when standard error is gone."""
    try:
        typer.echo(one_line(message), err=True)
    except (OSError, ValueError):
        pass


def _finish(code: int):
    """Flush standard output safely and exit.

    A reader that went away (``synth ... | head``) would make the flush at
    interpreter exit print "Exception ignored ... BrokenPipeError"; pointing
    the descriptor at /dev/null first keeps shutdown silent.
    """
    try:
        sys.stdout.flush()
    except (OSError, ValueError):
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):
            pass
    sys.exit(code)


def main(argv: list[str] | None = None) -> None:
    """Run the app; user errors become one line on stderr and exit code 2.

    SIGINT and SIGTERM end the run after its cleanup with one line that says
    what was written, and exit codes 130 and 143 (128 + signal number).
    """
    # synth's matrices are small (a dozen states): multi-threaded BLAS only makes threads wait
    # for each other, and on a busy machine a 10 x 10 matrix function then costs milliseconds
    # instead of microseconds.  Set before numpy is first imported (commands import it
    # lazily); a user's own setting wins.
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")

    try:
        from typer._click import exceptions as clickex  # typer >= 0.20 vendors click
    except ImportError:  # pragma: no cover - older typer uses click itself
        from click import exceptions as clickex

    import threading
    import warnings

    if not os.environ.get("SYNTH_DEBUG"):
        # numerical warnings (a pole exactly on a frequency grid point, say) are handled
        # where they arise; they are noise to a user
        warnings.simplefilter("ignore", RuntimeWarning)
    saved = None
    if threading.current_thread() is threading.main_thread():
        saved = ({sig: signal.getsignal(sig) for sig in (signal.SIGINT, signal.SIGTERM)},
                 sys.unraisablehook)
        for sig in (signal.SIGINT, signal.SIGTERM):
            signal.signal(sig, _raise_on_signal)
        sys.unraisablehook = _unraisable
    try:
        _run(clickex, argv)
    finally:  # main() called from Python (a test, a notebook) leaves the process as it was
        if saved is not None:
            for sig, handler in saved[0].items():
                signal.signal(sig, handler)
            sys.unraisablehook = saved[1]


def _run(clickex, argv) -> None:
    """Run the app and turn every ending into one line and an exit code."""
    try:
        rv = app(args=argv, prog_name="synth", standalone_mode=False)
    except _Interrupted as err:
        what = ("nothing written" if not err.written
                else "written before it: " + ", ".join(err.written))
        _say(f"synth: interrupted; {what}")
        _finish(128 + int(err.signum))
    except SynthError as err:
        _say(f"synth: error: {err}")
        _finish(EXIT_BAD_INPUT)
    except clickex.UsageError as err:
        if type(err).__name__ == "NoArgsIsHelpError":
            typer.echo(err.format_message() if hasattr(err, "format_message") else str(err))
            _finish(0)
        msg = " ".join(err.format_message().split())
        _say(f"synth: error: {msg} (see synth --help)")
        _finish(EXIT_BAD_INPUT)
    except clickex.ClickException as err:
        _say(f"synth: error: {' '.join(err.format_message().split())}")
        _finish(EXIT_BAD_INPUT)
    except typer.Exit as err:
        _finish(err.exit_code)
    except (typer.Abort, KeyboardInterrupt) as err:
        # an interrupt outside a command body (while click parses, say)
        cause = err.__cause__ if isinstance(err, typer.Abort) else err
        signum = getattr(cause, "signum", signal.SIGINT)
        _say("synth: interrupted; nothing written")
        _finish(128 + int(signum))
    except BrokenPipeError:
        _finish(0)
    except Exception as err:  # a bug: say so in one line; SYNTH_DEBUG=1 shows the traceback
        if os.environ.get("SYNTH_DEBUG"):
            raise
        _say(f"synth: internal error ({type(err).__name__}: {err}); please report it "
             "with the input file (set SYNTH_DEBUG=1 for details)")
        _finish(1)
    _finish(rv if isinstance(rv, int) else 0)


if __name__ == "__main__":  # pragma: no cover
    main()
