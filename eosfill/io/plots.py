"""Plots of a report (matplotlib, Agg canvas, PNG bytes): the shared figure
helpers, the time series of a time-resolved run and each cascade bank's
contribution; the temperature-entropy diagram is in :mod:`eosfill.io.plots_path`.
Used by :mod:`eosfill.report`; matplotlib is imported only here, on use.
"""
from __future__ import annotations

import io

import numpy as np

from eosfill.errors import EosfillError

MISSING_MATPLOTLIB = ("the report's plots need matplotlib, which is not installed; install it with "
                      "\"pip install matplotlib\" (or eosfill's report extra), or run without --report")


def require_matplotlib():
    """Import matplotlib (Agg canvas only) or raise EosfillError with an install hint."""
    try:
        import matplotlib  # noqa: F401
        from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: F401
        from matplotlib.figure import Figure  # noqa: F401
    except ImportError:
        raise EosfillError(MISSING_MATPLOTLIB) from None


def _figure(w=8.0, h=4.6):
    require_matplotlib()
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(w, h), dpi=100)
    FigureCanvasAgg(fig)
    return fig


def _png(fig):
    buf = io.BytesIO()
    fig.tight_layout()
    fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()


def _finish(ax, xlabel, ylabel):
    """Axis labels, a light grid and the legend of one time-series panel."""
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8)


def _C(T):
    return np.asarray(T, dtype=float) - 273.15


# limit lines: each its own colour and style, labelled on the plot itself
_LIMIT_STYLES = {
    "max_pressure": ("#b00020", "--", "max pressure"),
    "max_gas_temperature": ("#b00020", "--", "max gas"),
    "min_gas_temperature": ("#1565c0", "--", "min gas"),
    "max_wall_temperature": ("#e65100", "-.", "max wall"),
    "min_wall_temperature": ("#6a1b9a", "-.", "min wall"),
}


def _limit_line(ax, key, value, text, also=()):
    """A horizontal limit line with its name and value written on it (not only in a
    legend); ``also``: other limits at the same value, named in the same label."""
    color, style, words = _LIMIT_STYLES[key]
    ax.axhline(value, color=color, ls=style, lw=1.2)
    names = " and ".join([words] + [_LIMIT_STYLES[k][2] for k in also])
    ax.annotate(f"{names} limit{'s' if also else ''} {text}", xy=(0.005, value), xycoords=("axes fraction", "data"),
                xytext=(2, 2), textcoords="offset points", fontsize=7.5, color=color, va="bottom")


def _series(r, name):
    """(t, values) of a series: the integrator's dense solution when the run kept it."""
    d = getattr(r, "dense", None) or {}
    if name in d and "t" in d and len(d["t"]) >= len(r.t):
        t = np.asarray(d["t"], dtype=float)
        return t, np.asarray(d[name], dtype=float)
    return np.asarray(r.t, dtype=float), np.asarray(getattr(r, name), dtype=float)


def _pad_to(ax, values):
    """Keep every limit line inside the axes (a limit far from the data widens them a little)."""
    lo, hi = ax.get_ylim()
    vals = [v for v in values if v is not None and np.isfinite(v)]
    if vals:
        lo, hi = min(lo, min(vals)), max(hi, max(vals))
        pad = 0.06 * (hi - lo or 1.0)
        ax.set_ylim(lo - pad, hi + pad)


def plot_time_series(scenario, result):
    """Three figures of a time-resolved run: pressure, temperatures, mass against time,
    drawn from the integrator's dense solution (every step), with the located extrema."""
    r = result
    lim = scenario.limits
    out = []
    fig = _figure(8.0, 3.4)
    ax = fig.add_subplot(1, 1, 1)
    t, P = _series(r, "P")
    ax.plot(t, P / 1e5, color="#1f5fa0", lw=1.8, label="vessel pressure")
    if lim.max_pressure is not None:
        _limit_line(ax, "max_pressure", lim.max_pressure / 1e5, f"{lim.max_pressure / 1e5:.4g} bar")
        _pad_to(ax, [lim.max_pressure / 1e5])
    _finish(ax, "time  [s]", "pressure  [bar]")
    out.append(("pressure", _png(fig), "Vessel pressure against time."))
    fig = _figure(8.0, 3.6)
    ax = fig.add_subplot(1, 1, 1)
    t, Tg = _series(r, "T_gas")
    ax.plot(t, _C(Tg), color="#c0392b", lw=1.8, label="gas")
    if np.isfinite(np.asarray(r.T_wall_inner, dtype=float)).any():
        tw, Twi = _series(r, "T_wall_inner")
        ax.plot(tw, _C(Twi), color="#555", lw=1.5, label="wall, inner surface")
        if not np.allclose(r.T_wall_inner, r.T_wall_outer, equal_nan=True):
            tw, Two = _series(r, "T_wall_outer")
            ax.plot(tw, _C(Two), color="#999", lw=1.2, ls=":", label="wall, outer surface")
    for which, marker in (("max", "^"), ("min", "v")):
        val, when = r.peak("T_gas", which)
        if np.isfinite(val):
            ax.plot([when], [val - 273.15], marker, color="#c0392b", ms=6,
                    label=f"gas {which}imum {val - 273.15:.2f} °C at {when:.4g} s" if which == "min"
                    or r.kind == "fill" else None)
    shown = {}
    for key in ("max_gas_temperature", "min_gas_temperature", "max_wall_temperature", "min_wall_temperature"):
        v = getattr(lim, key)
        if v is not None:
            shown.setdefault(round(v, 6), []).append(key)
    for v, keys in shown.items():  # limits at one value share one line and one label
        _limit_line(ax, keys[0], v - 273.15, f"{v - 273.15:.4g} °C", also=keys[1:])
    shown = [v - 273.15 for v in shown]
    _pad_to(ax, shown)
    _finish(ax, "time  [s]", "temperature  [°C]")
    out.append(("temperature", _png(fig), "Gas and wall temperatures against time (the integrator's solution at "
                "every step), the located extremum of the gas temperature, and the limits checked, each labelled "
                "on its line."))
    fig = _figure(8.0, 3.4)
    ax = fig.add_subplot(1, 1, 1)
    t, mass = _series(r, "mass")
    ax.plot(t, mass, color="#2e7d32", lw=1.8, label="mass in the vessel")
    _finish(ax, "time  [s]", "mass  [kg]")
    out.append(("mass", _png(fig), "Mass of gas in the vessel against time."))
    return out


def plot_cascade(scenario, result):
    """Bars of mass delivered per bank; vessel and bank pressures after each bank."""
    st = result.stages
    names = [s["bank"] for s in st]
    x = np.arange(len(st))
    fig = _figure(9.0, 3.8)
    ax = fig.add_subplot(1, 2, 1)
    ax.bar(x, [s["mass_drawn"] for s in st], color="#1f5fa0")
    for xi, s in zip(x, st):
        ax.annotate(f"{s['mass_drawn']:.3g} kg", (xi, s["mass_drawn"]), ha="center", va="bottom", fontsize=8)
    ax.set_xticks(x, names)
    ax.set_xlabel("bank")
    ax.set_ylabel("mass delivered  [kg]")
    ax.set_title("mass delivered by each bank", fontsize=10)
    ax.grid(True, axis="y", alpha=0.3)
    ax2 = fig.add_subplot(1, 2, 2)
    ax2.plot(x, [s["vessel_P"] / 1e5 for s in st], "o-", color="#222", label="vessel after the bank")
    ax2.plot(x, [s["bank_P"] / 1e5 for s in st], "s--", color="#2e7d32", label="bank after it is used")
    ax2.plot(x, [b.pressure / 1e5 for b in scenario.banks[:len(st)]], "^:", color="#888", label="bank at the start")
    ax2.set_xticks(x, names)
    ax2.set_xlabel("bank")
    ax2.set_ylabel("pressure  [bar]")
    ax2.set_title("pressures after each bank", fontsize=10)
    ax2.grid(True, alpha=0.3)
    ax2.legend(fontsize=8)
    return _png(fig), ("Cascade: mass delivered by each bank (left) and the vessel and bank pressures after each "
                       "bank (right).")
