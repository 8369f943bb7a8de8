"""The measured accuracy of a model for the gas in hand (``data/model_accuracy.csv``).

``benchmarks/accuracy_table.py`` measures every named model against reference
equations (CoolProp, at the time the table is made; never at run time) and
writes one row per (model, quantity, fluid): n, worst signed deviation, RMS,
target, unit.  :func:`accuracy_lines` finds the rows for a Fluid's model and
its fluid (a pure fluid by name, a mixture by its exact composition) so that
reports show the model error beside every mass and temperature.
"""
from __future__ import annotations

import csv
from functools import lru_cache

QUANTITY_TEXT = {
    "density": "density, gas/supercritical 230-360 K, 1-90 MPa",
    "fill_end_T": "adiabatic empty-vessel fill end temperature, 20-87.5 MPa",
    "sat_liquid_density": "saturated-liquid density, 0.5-0.9 Tc",
    "vapour_pressure": "vapour pressure, 0.5-0.95 Tc",
}


def mixture_label(composition) -> str:
    """The label of a composition in the accuracy table: one fluid name, or
    "name x + name x ..." with mole fractions to 4 significant digits."""
    if isinstance(composition, str):
        return composition
    items = list(composition.items())
    if len(items) == 1:
        return items[0][0]
    return " + ".join(f"{n} {float(x):.4g}" for n, x in items)


@lru_cache(maxsize=None)
def _rows():
    from eosfill.model.components import data_dir

    path = data_dir() / "model_accuracy.csv"
    if not path.exists():
        return ()
    with open(path, newline="", encoding="utf-8") as fh:
        return tuple(csv.DictReader(fh))


def accuracy_rows(fluid):
    """Rows of ``data/model_accuracy.csv`` for the fluid's model and composition (list of dicts)."""
    label = mixture_label(dict(zip(fluid.names, fluid.mole_fractions)))
    return [r for r in _rows() if r["model"] == fluid.model.name and r["fluid"] == label]


def accuracy_lines(fluid):
    """Lines of text: the model's measured error for this fluid, or that it was not measured."""
    rows = accuracy_rows(fluid)
    what = "this fluid" if fluid.nc == 1 else "this mixture"
    if not rows:
        return [f"model {fluid.model.name}: accuracy not measured for {what} (docs/accuracy.md lists the "
                "fluids and mixtures measured against reference equations)"]
    out = [f"model {fluid.model.name}, measured against reference equations (docs/accuracy.md):"]
    for r in rows:
        unit = r["unit"]
        miss = "" if abs(float(r["worst"])) <= float(r["target"]) else f", misses the {r['target']} {unit} target"
        out.append(f"{QUANTITY_TEXT.get(r['quantity'], r['quantity'])}: worst {float(r['worst']):+.2f} {unit}, "
                   f"RMS {float(r['rms']):.2f} {unit} over {r['n']} states{miss}")
    return out
