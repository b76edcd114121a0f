"""The ``synth`` command line: parses options, calls the library, prints.

Every command's work is a library call (see ``docs/python-api.md``); this
module only formats.  Heavy libraries (cvxpy, matplotlib, scipy's optimisers)
are imported inside the commands so that ``synth --help`` starts fast.

Errors a user can cause (bad file, bad option) end as one line on standard
error and exit code 2; ``design`` exits 3 when the run completed but no design
meets every requirement.
"""

from __future__ import annotations

import json
import os
import sys
import tempfile
from contextlib import contextmanager
from pathlib import Path

import typer

from synth.errors import InputError, OptionError, SynthError

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


def _check_output_path(path: str | None, what: str, suffixes: tuple[str, ...] | None = None) -> None:
    """Fail before any work if an output path cannot be written."""
    if path is None:
        return
    p = Path(path)
    if suffixes and p.suffix.lower() not in suffixes:
        raise OptionError(f"{what} {path}: the file name must end in {' or '.join(suffixes)}")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise OptionError(f"{what} {path}: folder {parent} does not exist")
    if p.is_dir():
        raise OptionError(f"{what} {path}: is a folder, not a file")


def _write_json_atomic(path: str, doc: dict) -> None:
    """Write JSON through a temporary file so a failure never leaves a partial file."""
    text = json.dumps(doc, indent=2, allow_nan=False)
    p = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=".synth-", suffix=".json", dir=str(p.parent or "."))
    try:
        with os.fdopen(fd, "w") as fh:
            fh.write(text + "\n")
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


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
    _check_output_path(json_out, "--json")
    problem = _load(file)
    from synth.explain import explain_problem

    with _about(problem):
        result = explain_problem(problem)
    doc = result.to_json()
    _echo_lines(result.text_lines())
    if json_out:
        _write_json_atomic(json_out, doc)


def _split_design_ref(ref: str) -> tuple[str, int]:
    path, rank = ref, 1
    head, sep, tail = ref.rpartition(":")
    if sep and tail.isdigit() and head:
        path, rank = head, int(tail)
    if rank < 1:
        raise OptionError(f"--design {ref}: the rank must be 1 or more")
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
    _check_output_path(plot, "--plot", (".png", ".svg"))
    _check_output_path(json_out, "--json")
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
    _echo_lines(result.summary_lines())
    if operating_gain is not None:
        typer.echo(f"design {rank} operates at gain {operating_gain:.6g}")
    if plot:
        from synth.outputs.report.locus_plot import plot_locus

        plot_locus(result, plot, region=problem.region,
                   operating_gain=operating_gain,
                   title=problem.plant.label or None)
        typer.echo(f"picture written to {plot}")
    if json_out:
        _write_json_atomic(json_out, doc)


@app.command()
def design(
    file: str = typer.Argument(..., metavar="FILE", help="Requirements file (TOML)."),
    json_out: str | None = typer.Option(None, "--json", help="Write the synth.design/1 JSON here."),
    report: str | None = typer.Option(None, "--report", help="Write an HTML and PDF report into this folder."),
    sample_time: float | None = typer.Option(
        None, "--sample-time", help="Also give each design in discrete time (Tustin, seconds)."),
) -> None:
    """Search compensator structures, verify every candidate, rank the feasible designs."""
    _check_output_path(json_out, "--json")
    if sample_time is not None and not (sample_time > 0 and sample_time < 1e6):
        raise OptionError(f"--sample-time {sample_time:g}: must be a positive number of seconds")
    if report is not None and Path(report).exists() and not Path(report).is_dir():
        raise OptionError(f"--report {report}: exists and is not a folder")
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
        _write_json_atomic(json_out, doc)
    if report:
        from synth.design import prepare_report
        from synth.outputs.report.document import write_report

        written = write_report(prepare_report(problem, doc, run.explanation), report)
        for path in written:
            typer.echo(f"report written to {path}")
    if not run.any_feasible:
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
    from synth.outputs.compare import compare_runs
    from synth.outputs.document import load_design

    _check_output_path(json_out, "--json")
    _check_output_path(plot, "--plot", (".png", ".svg"))
    runs = [(f, load_design(f)) for f in files]
    result = compare_runs(runs)
    from synth.outputs.text import show

    show(result.text())
    if json_out:
        _write_json_atomic(json_out, result.to_json())
    if plot:
        from synth.outputs.report.compare_plot import plot_step_overlay

        plot_step_overlay(runs, plot)
        typer.echo(f"picture written to {plot}")


# -- entry point -------------------------------------------------------------------------------

def main(argv: list[str] | None = None) -> None:
    """Run the app; user errors become one line on stderr and exit code 2."""
    try:
        from typer._click import exceptions as clickex  # typer >= 0.20 vendors click
    except ImportError:  # pragma: no cover - older typer uses click itself
        from click import exceptions as clickex

    import warnings

    if not os.environ.get("SYNTH_DEBUG"):
        # numerical warnings (a pole exactly on a frequency grid point, say) are handled
        # where they arise; they are noise to a user
        warnings.simplefilter("ignore", RuntimeWarning)
    try:
        rv = app(args=argv, prog_name="synth", standalone_mode=False)
    except SynthError as err:
        typer.echo(f"synth: error: {err}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    except clickex.UsageError as err:
        if type(err).__name__ == "NoArgsIsHelpError":
            typer.echo(err.format_message() if hasattr(err, "format_message") else str(err))
            sys.exit(0)
        msg = " ".join(err.format_message().split())
        typer.echo(f"synth: error: {msg} (see synth --help)", err=True)
        sys.exit(EXIT_BAD_INPUT)
    except clickex.ClickException as err:
        typer.echo(f"synth: error: {' '.join(err.format_message().split())}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    except typer.Exit as err:
        sys.exit(err.exit_code)
    except (typer.Abort, KeyboardInterrupt):
        typer.echo("synth: interrupted", err=True)
        sys.exit(130)
    except BrokenPipeError:
        sys.exit(0)
    except Exception as err:  # a bug: say so in one line; SYNTH_DEBUG=1 shows the traceback
        if os.environ.get("SYNTH_DEBUG"):
            raise
        typer.echo(f"synth: internal error ({type(err).__name__}: {err}); please report it "
                   "with the input file (set SYNTH_DEBUG=1 for details)", err=True)
        sys.exit(1)
    sys.exit(rv if isinstance(rv, int) else 0)


if __name__ == "__main__":  # pragma: no cover
    main()
