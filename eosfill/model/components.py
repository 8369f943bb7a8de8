"""Pure-component data and binary interaction parameters.

Tables (each row with its published source; full citations in
``data/SOURCES.md``):

* ``data/fluids/fluids.csv`` - name, CAS number, formula, aliases, molar mass,
  Tc, Pc, acentric factor, ideal-gas Cp coefficients (Poling et al. 2001
  polynomial form) with their valid range.
* ``data/fluids/kij.csv`` - k_ij per model and pair.

Look-up is by name, alias, formula or CAS number, case-insensitive.
"""
from __future__ import annotations

import csv
import difflib
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from eosfill.errors import InputError

_CP_COLUMNS = ("cp_a0", "cp_a1", "cp_a2", "cp_a3", "cp_a4")


def data_dir() -> Path:
    """Folder holding the bundled data (``fluids/``, ``scenarios/``, ``SOURCES.md``).

    Installed from a wheel the data sit in ``eosfill/data``; in a source
    checkout (or an editable install) they sit in ``data/`` beside the package.
    """
    package = Path(__file__).resolve().parents[1]  # eosfill/
    for candidate in (package / "data", package.parent / "data"):
        if (candidate / "fluids" / "fluids.csv").is_file():
            return candidate
    raise FileNotFoundError(
        "eosfill data folder not found (looked in eosfill/data and ../data); "
        "reinstall the package"
    )


@dataclass(frozen=True)
class Component:
    """One fluid's constants, as read from ``fluids.csv``.

    Attributes
    ----------
    name, cas, formula : str
    aliases : tuple of str
    M : float
        Molar mass [kg/mol].
    Tc : float
        Critical temperature [K].
    Pc : float
        Critical pressure [Pa].
    omega : float
        Acentric factor [-].
    cp : ndarray, shape (5,)
        Cp°/R = Σ cp[k] T^k, Poling et al. (2001) form [1/K^k].
    cp_Tmin, cp_Tmax : float
        Range the Cp° correlation is valid over [K].
    crit_source, cp_source, note : str
        Source keys (see data/SOURCES.md) and remarks.
    """

    name: str
    cas: str
    formula: str
    aliases: tuple
    M: float
    Tc: float
    Pc: float
    omega: float
    cp: np.ndarray
    cp_Tmin: float
    cp_Tmax: float
    crit_source: str
    cp_source: str
    note: str


def _key(text: str) -> str:
    return " ".join(str(text).strip().lower().split())


@lru_cache(maxsize=None)
def load_components(path: str | None = None):
    """Read ``fluids.csv`` into ``(components by name, index of every alias)``."""
    path = Path(path) if path else data_dir() / "fluids" / "fluids.csv"
    comps: dict[str, Component] = {}
    index: dict[str, str] = {}
    with open(path, newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            if row.get("cp_form", "poling").strip() != "poling":
                raise ValueError(f"{path}: {row['name']}: unknown cp_form {row['cp_form']!r}")
            aliases = tuple(a.strip() for a in row.get("aliases", "").split(";") if a.strip())
            cp = np.array([float(row[c] or 0.0) for c in _CP_COLUMNS])
            cp.setflags(write=False)
            comp = Component(
                name=row["name"].strip(), cas=row["cas"].strip(), formula=row["formula"].strip(),
                aliases=aliases, M=float(row["M_kg_per_mol"]), Tc=float(row["Tc_K"]),
                Pc=float(row["Pc_Pa"]), omega=float(row["omega"]), cp=cp,
                cp_Tmin=float(row["cp_Tmin_K"]), cp_Tmax=float(row["cp_Tmax_K"]),
                crit_source=row["crit_source"].strip(), cp_source=row["cp_source"].strip(),
                note=row.get("note", "").strip(),
            )
            comps[comp.name] = comp
            for label in (comp.name, comp.cas, *aliases):
                k = _key(label)
                if not k:
                    continue
                if k in index and index[k] != comp.name:
                    raise ValueError(f"{path}: alias {label!r} names both {index[k]} and {comp.name}")
                index[k] = comp.name
    # formulas may be shared by isomers (C4H10): unique ones become aliases,
    # shared ones are kept apart so that a look-up can say it is ambiguous
    by_formula: dict[str, list[str]] = {}
    for comp in comps.values():
        by_formula.setdefault(_key(comp.formula), []).append(comp.name)
    ambiguous = {}
    for k, names in by_formula.items():
        if not k or k in index:
            continue
        if len(names) == 1:
            index[k] = names[0]
        else:
            ambiguous[k] = tuple(names)
    _AMBIGUOUS.clear()
    _AMBIGUOUS.update(ambiguous)
    return comps, index


_AMBIGUOUS: dict[str, tuple] = {}


def fluid_names() -> list[str]:
    """Names of all bundled fluids, in table order."""
    return list(load_components()[0])


def get_component(name: str) -> Component:
    """Look up a fluid by name, alias, formula or CAS number (case-insensitive).

    Raises
    ------
    InputError
        Unknown fluid; the message suggests the closest names.
    """
    if not isinstance(name, str):
        raise InputError("fluid", name, "a fluid name, alias, formula or CAS number (str)")
    comps, index = load_components()
    k = _key(name)
    if k in index:
        return comps[index[k]]
    if k in _AMBIGUOUS:
        raise InputError("fluid", name, message=f"fluid {name!r} is ambiguous: it is the formula of "
                         f"{', '.join(_AMBIGUOUS[k])}; give the name")
    close = difflib.get_close_matches(k, list(index), n=5, cutoff=0.6)
    names = sorted({index[c] for c in close})
    hint = f"; did you mean {', '.join(names)}?" if names else ""
    raise InputError("fluid", name, message=f"unknown fluid {name!r}{hint} "
                     "(`eosfill fluids` lists all fluids)")


@lru_cache(maxsize=None)
def load_kij(path: str | None = None):
    """Read ``kij.csv`` into {(model, name1, name2): (kij, source, note)}, both orders."""
    path = Path(path) if path else data_dir() / "fluids" / "kij.csv"
    table = {}
    if not Path(path).is_file():
        return table
    with open(path, newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            model = row["model"].strip().upper()
            n1, n2 = row["name1"].strip(), row["name2"].strip()
            entry = (float(row["kij"]), row["source"].strip(), row.get("note", "").strip())
            table[(model, n1, n2)] = entry
            table[(model, n2, n1)] = entry
    return table


def kij_table_model(model_name: str) -> str:
    """Which kij table a model reads: PR78 shares PR's (same a and b functional
    form; common practice, no source), SRK has its own."""
    return "PR" if model_name in ("PR", "PR78") else model_name


def kij_matrix(names, model_name: str, overrides=None):
    """Symmetric k_ij matrix for the named components and its per-pair sources.

    Parameters
    ----------
    names : sequence of str
        Component names as in ``fluids.csv``.
    model_name : str
        "PR", "PR78" or "SRK".
    overrides : dict, optional
        {(name_or_alias_1, name_or_alias_2): kij} set by the user.

    Returns
    -------
    K : ndarray, shape (nc, nc)
    sources : dict {(name1, name2): str}
        Where each nonzero or looked-up value came from ("user", a source key,
        or "none known: 0").
    """
    nc = len(names)
    K = np.zeros((nc, nc))
    sources = {}
    table = load_kij()
    tm = kij_table_model(model_name)
    for i in range(nc):
        for j in range(i + 1, nc):
            entry = table.get((tm, names[i], names[j]))
            if entry is not None:
                K[i, j] = K[j, i] = entry[0]
                sources[(names[i], names[j])] = entry[1] + (f" ({entry[2]})" if entry[2] else "")
            else:
                sources[(names[i], names[j])] = "none known: 0"
    for pair, value in (overrides or {}).items():
        if not (isinstance(pair, tuple) and len(pair) == 2):
            raise InputError("kij", pair, "keys are pairs of fluid names, e.g. ('methane', 'carbon dioxide')")
        n1, n2 = (get_component(p).name for p in pair)
        if n1 not in names or n2 not in names:
            raise InputError(f"kij[{pair!r}]", value, f"both fluids must be in the mixture {list(names)}")
        if n1 == n2:
            raise InputError(f"kij[{pair!r}]", value, "a pair of two different fluids")
        try:
            value = float(value)
        except (TypeError, ValueError):
            raise InputError(f"kij[{pair!r}]", value, "a number in (-1, 1)") from None
        if not (-1.0 < value < 1.0):
            raise InputError(f"kij[{pair!r}]", value, "a number in (-1, 1)")
        i, j = names.index(n1), names.index(n2)
        K[i, j] = K[j, i] = value
        key = (names[min(i, j)], names[max(i, j)])
        sources[key] = "user"
    return K, sources
