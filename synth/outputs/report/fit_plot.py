"""The picture of a step-test fit (``synth fit --plot``): data, fitted model, residual.

Three panels share the time axis: the recorded input; the recorded output
(points) with the fitted model's response (line); the residual (data minus
model) with a band of plus and minus twice its RMS.  matplotlib is imported
here only, when a picture is asked for.
"""

from __future__ import annotations

from pathlib import Path

from synth.errors import InputError

__all__ = ["plot_fit"]

_INK = "#1f2a33"
_DATA = "#7a8792"
_MODEL = "#0e7c86"
_RESID = "#c4463a"
_GRID = "#e3e8ec"


def plot_fit(fit, path: str | Path) -> Path:
    """Draw ``fit`` (a :class:`synth.problem.fit.FitResult` with its data) to PNG or SVG.

    The file is written through a temporary name, so a failure leaves no
    partial picture.

    Raises
    ------
    InputError
        When the file cannot be written or its suffix is not .png or .svg.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from synth.outputs.files import write_text_atomic

    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError(f"cannot write {out}: the picture must be .png or .svg")
    d = fit.data
    yhat = fit.fitted_output()
    resid = d.output - yhat
    fig, axes = plt.subplots(3, 1, sharex=True, figsize=(8.0, 6.4),
                             gridspec_kw={"height_ratios": [1.0, 2.4, 1.2]})
    try:
        a_in, a_out, a_res = axes
        a_in.plot(d.time, d.input, color=_INK, lw=1.2, drawstyle="default")
        a_in.set_ylabel("input")
        a_out.plot(d.time, d.output, ".", ms=2.5, color=_DATA, label="recorded output")
        a_out.plot(d.time, yhat, "-", lw=1.6, color=_MODEL, label=f"{fit.model} model")
        a_out.set_ylabel("output")
        a_out.legend(loc="best", fontsize=8, frameon=False)
        band = 2.0 * fit.residual_rms
        a_res.axhspan(-band, band, color=_GRID, lw=0)
        a_res.plot(d.time, resid, ".", ms=2.0, color=_RESID)
        a_res.axhline(0.0, color=_INK, lw=0.6)
        a_res.set_ylabel("residual")
        a_res.set_xlabel("time")
        for ax in axes:
            ax.grid(True, color=_GRID, lw=0.6)
            for side in ("top", "right"):
                ax.spines[side].set_visible(False)
        taus = ", ".join(f"{x:.4g}" for x in fit.time_constants) or "none"
        a_in.set_title(f"{Path(fit.source).name}: gain {fit.gain:.4g}, time constants {taus}, "
                       f"dead time {fit.dead_time:.4g}, residual RMS {fit.residual_rms:.3g}",
                       fontsize=9, color=_INK, loc="left")
        fig.text(0.99, 0.005, "linear model fitted to one test: check on the real machine",
                 ha="right", va="bottom", fontsize=7, color=_DATA)
        fig.tight_layout()
        import io

        buf = io.BytesIO()
        fig.savefig(buf, format=suffix[1:], facecolor="white", dpi=120)
    finally:
        plt.close(fig)
    write_text_atomic(out, buf.getvalue())
    return out
