"""PNG plots of scans: gradient variance against qubits and layers, metrics against layers.

As in :mod:`haarline.plots.figures` (which documents the palette and the conventions), each plot
has a pure ``*_series`` function giving the drawn numbers and a ``*_png`` function
returning PNG bytes; missing report data raises :class:`ValueError` naming the key.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
from haarline.metrics.haar import haar_meyer_wallach
from haarline.plots import _data as data
from haarline.plots import _style as style

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = ["sweep_png", "sweep_series", "variance_scan_png", "variance_series"]

Report = Mapping[str, Any]
Floats = data.Floats

BLUE = style.PALETTE["blue"]
GREEN = style.PALETTE["green"]
HAAR = style.PALETTE["vermillion"]
POWER = style.PALETTE["purple"]


def _fit_curves(fit: Any, qubits: Floats) -> dict[str, dict[str, Any]]:
    """The report's fits, each with its curve over the scanned qubit range."""
    if not isinstance(fit, Mapping):
        return {}
    grid = np.linspace(qubits.min(), qubits.max(), 60)
    out = {}
    for model, x in (("exponential", grid), ("power", np.log(grid))):
        f = fit.get(model)
        if isinstance(f, Mapping):
            out[model] = {
                "slope": float(f["slope"]),
                "slope_stderr": float(f["slope_stderr"]),
                "intercept": float(f["intercept"]),
                "aic": float(f["aic"]),
                "qubits": grid,
                "variance": np.exp(float(f["intercept"]) + float(f["slope"]) * x),
            }
    return out


def _cost_text(cost: Any) -> str:
    if isinstance(cost, str):
        return f"{cost} cost"
    return f"Pauli-sum cost ({style.plural(len(cost), 'term')})"


def variance_series(report: Report) -> dict[str, Any]:
    """The numbers drawn by :func:`variance_scan_png`.

    Parameters
    ----------
    report : mapping
        A report of :func:`haarline.analyze` with ``trainability``.

    Returns
    -------
    dict
        ``name``; ``points`` and ``layer_points``, each a dict of equal-length arrays
        ``qubits``, ``layers``, ``variance``, ``low``, ``high`` (``layer_points`` may be
        empty); ``fits``: for each of ``exponential`` (ln Var = intercept + slope·n) and
        ``power`` (ln Var = intercept + slope·ln n) in the report, its ``slope``,
        ``slope_stderr``, ``intercept``, ``aic`` and the drawn curve (``qubits``,
        ``variance``); ``barren_plateau``, ``reason``, ``cost`` (words), ``samples``.

    Raises
    ------
    ValueError
        If ``trainability`` or ``trainability.points`` is missing or empty.
    """
    points = data.variance_points(report, "points")
    if points["qubits"].size == 0:
        raise ValueError("the report's 'trainability.points' is empty; nothing to plot")
    train = data.need(report, "trainability")
    empty = {k: np.zeros(0) for k in points}
    layer_points = (
        data.variance_points(report, "layer_points") if train.get("layer_points") else empty
    )
    return {
        "name": str(data.need(report, "circuit", "name")),
        "points": points,
        "layer_points": layer_points,
        "fits": _fit_curves(train.get("fit"), points["qubits"]),
        "barren_plateau": train.get("barren_plateau"),
        "reason": str(train.get("reason") or ""),
        "cost": _cost_text(train.get("cost", "global")),
        "samples": int(data.need(report, "trainability", "samples")),
    }


def variance_scan_png(report: Report) -> bytes:
    """Gradient variance against qubit count on a log axis, with both fits and the verdict.

    Points carry their 95% intervals as error bars. The exponential fit
    (``ln Var = intercept + slope·n``) is solid, the power law
    (``ln Var = intercept + slope·ln n``) dashed. When the report has ``layer_points``, a
    second panel shows the variance against layer count. The barren-plateau verdict and
    its reason are written under the axes.

    Parameters
    ----------
    report : mapping
        A report with ``trainability``.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        As :func:`variance_series`.
    """
    s = variance_series(report)
    p, lp = s["points"], s["layer_points"]
    reason = s["reason"] or {True: "barren plateau", False: "not a barren plateau"}.get(
        s["barren_plateau"], "no verdict"
    )
    footer = [f"{reason[:1].upper()}{reason[1:].rstrip('.')}."]
    zero = [int(n) for n, v in zip(p["qubits"], p["variance"], strict=True) if v <= 0]
    if zero:
        footer.append(f"The variance is exactly 0 at n = {zero}, which a log axis cannot show.")
    layers = sorted({int(v) for v in p["layers"]})
    layer_text = style.plural(layers[0], "layer") if len(layers) == 1 else "layers = n"
    if len(layers) > 1 and not np.array_equal(p["layers"], p["qubits"]):
        layer_text = f"{', '.join(map(str, layers))} layers"
    subtitle = (
        f"{s['samples']} gradient samples per point, {s['cost']}, {layer_text}; bars: 95% intervals"
    )
    two = lp["qubits"].size > 0
    with style.house_style():
        key = 0.42 * two  # inches for the legend strip under two panels
        title = f"{s['name']}: gradient variance"
        fig, rect = style.figure(3.1 + key if two else 2.95, title, subtitle, footer)
        if two:
            ax, right = style.panels(fig, rect, 1, 2, widths=[3, 2], reserve=key)[0]
        else:
            ax = style.panels(fig, rect, titled=False)[0, 0]
        style.variance_errorbars(
            ax,
            p["qubits"],
            p,
            color=BLUE,
            marker="o",
            zorder=3,
            label="mean Var[∂C/∂θ] over parameters",
        )
        _fits(ax, s["fits"])
        ax.set_yscale("log")
        style.widen_log_axis(ax, np.concatenate([p["low"], p["high"]]))
        style.integer_ticks(ax, p["qubits"])
        ax.set_xlabel("qubits n")
        ax.set_ylabel("gradient variance (log)")
        if not two:
            ax.legend(loc="best")
            return style.render(fig)
        ax.set_title("against qubit count")
        ok = lp["variance"] > 0
        right.plot(lp["layers"][ok], lp["variance"][ok], color=GREEN, linewidth=0.8, alpha=0.6)
        style.variance_errorbars(
            right,
            lp["layers"],
            lp,
            color=GREEN,
            marker="s",
            zorder=3,
            label=f"against layers at n = {int(lp['qubits'][0])}",
        )
        right.set_yscale("log")
        style.widen_log_axis(right, np.concatenate([lp["low"], lp["high"]]))
        style.integer_ticks(right, lp["layers"])
        right.set_xlabel("layers")
        right.set_title(f"against layers at n = {int(lp['qubits'][0])}")
        style.legend_strip(fig, rect, key, [ax, right], ncols=2)
        return style.render(fig)


def _fits(ax: Axes, fits: Mapping[str, Mapping[str, Any]]) -> None:
    if "exponential" in fits:
        e = fits["exponential"]
        ax.plot(
            e["qubits"],
            e["variance"],
            color=HAAR,
            linewidth=1.3,
            label=f"exponential: decay {style.fmt(-e['slope'])} ± "
            f"{style.fmt(e['slope_stderr'], 2)} nats per qubit (AIC {e['aic']:.3g})",
        )
    if "power" in fits:
        w = fits["power"]
        ax.plot(
            w["qubits"],
            w["variance"],
            color=POWER,
            linewidth=1.3,
            linestyle=(0, (5, 2)),
            label=f"power law: Var ∝ $n^{{{w['slope']:.3g}}}$, exponent ± "
            f"{style.fmt(w['slope_stderr'], 2)} (AIC {w['aic']:.3g})",
        )


def sweep_series(report: Report) -> dict[str, Any]:
    """The numbers drawn by :func:`sweep_png`.

    Parameters
    ----------
    report : mapping
        A report with ``sweep`` rows.

    Returns
    -------
    dict
        ``name``; ``layers`` (array); ``kl``: ``None`` or a dict of arrays ``value``,
        ``low``, ``high``, ``bias``; ``meyer_wallach``: ``None`` or a dict of arrays
        ``value``, ``low``, ``high`` and the float ``haar``; ``pairs``, ``samples``
        (from ``options``, ``None`` if absent) and ``qubits``.

    Raises
    ------
    ValueError
        If ``sweep`` is missing or empty, or its rows carry neither metric.
    """
    rows = data.need(report, "sweep")
    if not isinstance(rows, Sequence) or not rows:
        raise ValueError("the report's 'sweep' is empty; analyze with --layers-sweep")
    qubits = int(data.need(report, "circuit", "qubits"))

    def metric(key: str, span: str) -> dict[str, Any] | None:
        if not all(r.get(key) is not None and r.get(span) is not None for r in rows):
            return None
        return {
            "value": np.array([float(r[key]) for r in rows]),
            "low": np.array([float(r[span][0]) for r in rows]),
            "high": np.array([float(r[span][1]) for r in rows]),
        }

    kl = metric("kl_corrected", "kl_interval")
    mw = metric("meyer_wallach", "meyer_wallach_interval")
    if mw is not None:
        ent = report.get("entanglement") or {}
        given = ent.get("haar_meyer_wallach")
        mw["haar"] = float(given) if given is not None else haar_meyer_wallach(qubits)
    if kl is None and mw is None:
        raise ValueError(
            "the report's 'sweep' rows carry neither 'kl' nor 'meyer_wallach'; analyze with "
            "the expressibility or entanglement metric"
        )
    options = report.get("options") or {}
    return {
        "name": str(data.need(report, "circuit", "name")),
        "layers": np.array([float(r["layers"]) for r in rows]),
        "kl": kl,
        "meyer_wallach": mw,
        "pairs": options.get("pairs"),
        "samples": options.get("samples"),
        "qubits": qubits,
    }


def sweep_png(report: Report) -> bytes:
    """Metrics against layer count from the ``sweep`` rows, as PNG bytes.

    The bias-corrected KL from Haar on a log axis with its intervals (0 for a circuit the
    data cannot tell from Haar); the Meyer-Wallach mean with its intervals and the
    Haar-random value in a second panel.

    Parameters
    ----------
    report : mapping
        A report with ``sweep`` rows.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        As :func:`sweep_series`.
    """
    s = sweep_series(report)
    sizes = []
    if s["kl"] is not None and s["pairs"]:
        sizes.append(f"{s['pairs']} parameter pairs")
    if s["meyer_wallach"] is not None and s["samples"]:
        sizes.append(f"{s['samples']} entanglement samples")
    subtitle = (
        f"{' and '.join(sizes) or 'sampled metrics'} at each layer count, "
        f"{style.plural(s['qubits'], 'qubit')}; bars: 95% intervals"
    )
    panels = [k for k in ("kl", "meyer_wallach") if s[k] is not None]
    x = s["layers"]
    footer = []
    if s["kl"] is not None and np.any(s["kl"]["low"] <= 0):
        footer.append(
            "A KL interval that starts at 0 runs to the bottom of the log axis: at that layer "
            "count the data are consistent with a Haar-random circuit at this sample size."
        )
    with style.house_style():
        fig, rect = style.figure(
            0.5 + 1.9 * len(panels), f"{s['name']}: metrics against layers", subtitle, footer
        )
        axes = style.panels(fig, rect, len(panels), 1, sharex=True)[:, 0]
        for ax, key in zip(axes, panels, strict=True):
            m = s[key]
            if key == "kl":
                _kl_panel(ax, x, m)
            else:
                err = np.clip(np.vstack([m["value"] - m["low"], m["high"] - m["value"]]), 0, None)
                ax.errorbar(
                    x, m["value"], yerr=err, color=GREEN, marker="s", label="Meyer-Wallach mean"
                )
                ax.axhline(
                    m["haar"],
                    color=HAAR,
                    linewidth=1.2,
                    linestyle=(0, (4, 2)),
                    label=f"Haar-random states {style.unit_text(m['haar'])}",
                )
                ax.set_ylim(-0.03, 1.03)
                ax.set_ylabel("Meyer-Wallach Q")
                ax.set_title("entanglement")
            ax.legend(loc="best")
        style.integer_ticks(axes[-1], x)
        axes[-1].set_xlabel("layers")
        return style.render(fig)


def _kl_panel(ax: Axes, x: Floats, m: Mapping[str, Floats]) -> None:
    """Bias-corrected KL with intervals on a log axis.

    A corrected KL of 0 (the data cannot tell the circuit from Haar) is drawn as a
    downward mark on the floor of the axis; a lower end at 0 runs to the floor.
    """
    value, low, high = m["value"], m["low"], m["high"]
    positive = np.concatenate([a[a > 0] for a in (value, low, high)])
    floor = float(positive.min()) / 3.0 if positive.size else 1e-6
    ok = value > 0
    err = np.clip(np.vstack([value - np.maximum(low, floor), high - value]), 0.0, None)
    ax.set_yscale("log")
    ax.errorbar(
        x[ok], value[ok], yerr=err[:, ok], color=BLUE, marker="o", label="KL from Haar (corrected)"
    )
    if np.any(~ok):
        ax.errorbar(
            x[~ok],
            np.full(int(np.sum(~ok)), floor),
            yerr=np.vstack([np.zeros(int(np.sum(~ok))), np.maximum(high[~ok] - floor, 0.0)]),
            color=BLUE,
            marker="v",
            linestyle="none",
            label="corrected KL 0: not told apart from Haar",
        )
    ax.set_ylim(bottom=floor)
    ax.set_ylabel("KL (nats, log)")
    ax.set_title("expressibility (lower is more expressive)")
