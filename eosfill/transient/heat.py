"""Heat transfer between the gas, the vessel wall and the surroundings.

Two wall models and a few published inner-surface coefficients.

Wall models (state = wall temperatures, advanced by :mod:`eosfill.transient`):

* :class:`LumpedWall` - one temperature, m c dT_w/dt = Q_in + Q_out      (H1)
* :class:`LayeredWall` - 1-D radial conduction through concentric layers
  (metal or polymer liner + composite), finite volumes on the method of
  lines; in each layer

      ρ c ∂T/∂t = (1/r) ∂/∂r (k r ∂T/∂r)                                  (H2)

  discretised as cells between radii r_j, r_{j+1}, with the conductance
  between neighbouring cell centres the series of half-cell resistances
  ln(r_face/r_c)/(2π k L) (the exact steady cylindrical resistance,
  Incropera & DeWitt, *Fundamentals of Heat and Mass Transfer*, Eq. 3.28,
  from memory), so a steady run reproduces the analytic resistance exactly.

Surface exchange Q = h A (T_fluid − T_surface) (Newton's law of cooling)
with the surface temperature eliminated through the half-cell resistance.

Inner coefficients (:class:`InnerCoefficient` implementations):

* :class:`ConstantCoefficient` - one value while gas flows in or out and
  another while the vessel is closed; Woodfield, Monde & Takano, J. Therm.
  Sci. Technol. 3 (2008) 241-253, doi:10.1299/jtst.3.241 fitted 500 W/(m² K)
  during filling, 250 W/(m² K) after filling (inside) and 4.5 W/(m² K)
  outside for practical 35 and 70 MPa hydrogen vessels (values read from
  the paper's abstract).
* :class:`JetNaturalConvection` - Nu_D = a Re_d^b + c Ra_D^e, forced
  convection driven by the inlet jet (Re on the inlet diameter d) plus
  natural convection (Ra on the vessel inner diameter D), the form of
  Woodfield, Monde & Mitsutake, J. Therm. Sci. Technol. 2 (2007) 180-191.
  The constants a = 0.56, b = 0.67, c = 0.104, e = 0.352 are **from
  memory** (not verified against the paper); pass your own.  It needs the
  gas viscosity and thermal conductivity, which eosfill does not model:
  the caller gives them (a representative value for the run).  The gas's
  own isobaric heat capacity and thermal expansion come from the equation
  of state at each instant (:func:`isobaric_expansion`).

Rayleigh number on a length L (Incropera & DeWitt, *Fundamentals of Heat
and Mass Transfer*, 6th ed., Eq. 9.25, equation number from memory):

    Ra_L = g β |T_w − T| L³ / (ν α),  ν = μ/ρ,  α = k/(ρ c_p)           (H3)

with β = (1/v)(∂v/∂T)_P the volumetric thermal expansion coefficient,
which for a real gas follows from the equation of state by the
triple-product rule

    β = −(∂P/∂T)_v / (v (∂P/∂v)_T)                                      (H4)

and is 1/T for an ideal gas (P v = R T).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from eosfill.errors import InputError

G_STANDARD = 9.80665  # m/s², standard acceleration of gravity (CGPM 1901)


def _nonneg(name, value, strict=False):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(name, value, "a number > 0" if strict else "a number ≥ 0") from None
    if not math.isfinite(v) or v < 0.0 or (strict and v == 0.0):
        raise InputError(name, value, "a number > 0" if strict else "a number ≥ 0")
    return v


def isobaric_expansion(v, dPdT_v, dPdv_T):
    """Volumetric thermal expansion β = (1/v)(∂v/∂T)_P [1/K] from the equation of state (H4).

    Parameters
    ----------
    v : molar volume [m³/mol] (the fluid's own, after any volume shift)
    dPdT_v : (∂P/∂T)_v [Pa/K];  dPdv_T : (∂P/∂v)_T [Pa mol/m³] (< 0 where the phase is stable)

    β = −(∂P/∂T)_v / (v (∂P/∂v)_T) (triple-product rule); 1/T for an ideal gas.
    A constant volume shift c leaves both derivatives unchanged (v_eos = v + c).
    """
    return -np.asarray(dPdT_v, dtype=float) / (np.asarray(v, dtype=float) * np.asarray(dPdv_T, dtype=float))


def rayleigh_number(L, T_gas, T_wall, rho, cp_mass, beta, mu, k):
    """Ra_L = g β |T_w − T| L³ ρ² c_p / (μ k) = g β ΔT L³/(ν α) (H3) [-].

    L [m], T_gas, T_wall [K], rho [kg/m³], cp_mass [J/(kg K)], beta [1/K],
    mu [Pa s], k [W/(m K)]."""
    return G_STANDARD * beta * abs(T_wall - T_gas) * L**3 * rho**2 * cp_mass / (mu * k)


# --------------------------------------------------------------------------
# inner heat-transfer coefficients
# --------------------------------------------------------------------------
@dataclass
class ConstantCoefficient:
    """h [W/(m² K)] while gas flows (``flowing``) and while the vessel is closed (``closed``).

    ``ConstantCoefficient.woodfield_2008()`` gives 500 / 250 W/(m² K)
    (Woodfield, Monde & Takano 2008, abstract).
    """

    flowing: float
    closed: float | None = None

    def __post_init__(self):
        self.flowing = _nonneg("inner heat-transfer coefficient", self.flowing)
        self.closed = self.flowing if self.closed is None else _nonneg("inner coefficient (closed)", self.closed)

    @classmethod
    def woodfield_2008(cls):
        return cls(500.0, 250.0)

    def __call__(self, flowing, **_):
        return self.flowing if flowing else self.closed

    def describe(self):
        return f"constant inner coefficient {self.flowing:g} W/(m2 K) flowing, {self.closed:g} closed"


@dataclass
class JetNaturalConvection:
    """Nu_D = a Re_d^b + c Ra_D^e (Woodfield, Monde & Mitsutake 2007 form; constants from memory).

    Parameters
    ----------
    D : vessel inner diameter [m] (length of Nu and Ra)
    d_inlet : inlet (jet) diameter [m] (length of Re)
    mu : gas dynamic viscosity [Pa s];  k : gas thermal conductivity [W/(m K)]
        (representative values; eosfill has no transport-property model)
    a, b, c, e : constants (defaults from memory, see the module docstring)

    Re_d = 4 ṁ/(π d μ);  Ra_D = g β |T_w − T| D³ ρ² c_p /(μ k) (H3).

    Called with the gas state: ``rho`` [kg/m³], ``cp_mass`` [J/(kg K)] and
    ``beta`` [1/K], the gas's isobaric heat capacity and thermal expansion
    from the equation of state ((H4); :mod:`eosfill.transient` passes them
    at every instant).  ``beta=None`` takes the ideal-gas value 1/T; a
    temperature difference without ``cp_mass`` is an error.
    """

    D: float
    d_inlet: float
    mu: float
    k: float
    a: float = 0.56
    b: float = 0.67
    c: float = 0.104
    e: float = 0.352

    def __post_init__(self):
        for name in ("D", "d_inlet", "mu", "k"):
            setattr(self, name, _nonneg(name, getattr(self, name), strict=True))

    def rayleigh(self, T_gas, T_wall, rho, cp_mass, beta=None):
        """Ra_D (H3) on the vessel's inner diameter; ``beta=None``: ideal gas, 1/T_gas."""
        beta = 1.0 / T_gas if beta is None else beta
        return rayleigh_number(self.D, T_gas, T_wall, rho, cp_mass, beta, self.mu, self.k)

    def __call__(self, flowing, mdot=0.0, T_gas=300.0, T_wall=300.0, rho=1.0, cp_mass=None, beta=None, **_):
        Re = 4.0 * abs(mdot) / (math.pi * self.d_inlet * self.mu) if flowing else 0.0
        if T_wall == T_gas:
            Ra = 0.0
        elif cp_mass is None:
            raise InputError("cp_mass", None, "the gas's isobaric heat capacity [J/(kg K)] for the Rayleigh number")
        else:
            Ra = self.rayleigh(T_gas, T_wall, rho, cp_mass, beta)
        Nu = self.a * Re**self.b + self.c * Ra**self.e
        return Nu * self.k / self.D

    def describe(self):
        return (f"Nu = {self.a:g} Re^{self.b:g} + {self.c:g} Ra^{self.e:g} "
                "(Woodfield, Monde & Mitsutake 2007 form; constants from memory)")


# --------------------------------------------------------------------------
# walls
# --------------------------------------------------------------------------
@dataclass
class LumpedWall:
    """The wall as one temperature: m c dT_w/dt = Q_gas→wall + Q_ambient→wall (H1).

    Parameters
    ----------
    mass : [kg] > 0;  specific_heat : [J/(kg K)] > 0
    inner_area, outer_area : [m²] ≥ 0
    """

    mass: float
    specific_heat: float
    inner_area: float
    outer_area: float = 0.0

    def __post_init__(self):
        self.mass = _nonneg("wall mass", self.mass, strict=True)
        self.specific_heat = _nonneg("wall specific heat", self.specific_heat, strict=True)
        self.inner_area = _nonneg("inner area", self.inner_area)
        self.outer_area = _nonneg("outer area", self.outer_area)

    n_nodes = 1

    @property
    def heat_capacity(self):
        """Node heat capacities [J/K], shape (1,)."""
        return np.array([self.mass * self.specific_heat])

    def inner_resistance(self):
        """Conduction resistance from the first node to the inner surface [K/W]."""
        return 0.0

    def outer_resistance(self):
        return 0.0

    def conduction(self, Tw):
        """Net conduction into each node [W] (none for one node)."""
        return np.zeros(1)

    def describe(self):
        return f"lumped wall {self.mass:g} kg x {self.specific_heat:g} J/(kg K)"


@dataclass
class Layer:
    """One wall layer: thickness [m], conductivity k [W/(m K)], density [kg/m³],
    specific heat [J/(kg K)], number of cells."""

    thickness: float
    conductivity: float
    density: float
    specific_heat: float
    cells: int = 4
    name: str = ""

    def __post_init__(self):
        for k in ("thickness", "conductivity", "density", "specific_heat"):
            setattr(self, k, _nonneg(f"layer {self.name or ''} {k}".strip(), getattr(self, k), strict=True))
        if int(self.cells) != self.cells or self.cells < 1:
            raise InputError("layer cells", self.cells, "a whole number ≥ 1")
        self.cells = int(self.cells)


@dataclass
class LayeredWall:
    """Concentric cylindrical layers from ``inner_radius`` outwards (H2), method of lines.

    The cylinder's length is taken so that its inner surface equals
    ``inner_area`` (L = A_in/(2π r_in)): ends and domes are represented by
    the same radial wall.  ``outer_area`` follows from the geometry.
    """

    inner_radius: float
    inner_area: float
    layers: list = field(default_factory=list)

    def __post_init__(self):
        self.inner_radius = _nonneg("inner radius", self.inner_radius, strict=True)
        self.inner_area = _nonneg("inner area", self.inner_area, strict=True)
        if not self.layers:
            raise InputError("layers", self.layers, "one or more Layer")
        self.L = self.inner_area / (2.0 * math.pi * self.inner_radius)
        faces, k, rc, cap = [self.inner_radius], [], [], []
        for lay in self.layers:
            r0 = faces[-1]
            edges = np.linspace(r0, r0 + lay.thickness, lay.cells + 1)
            for j in range(lay.cells):
                ra, rb = edges[j], edges[j + 1]
                faces.append(rb)
                k.append(lay.conductivity)
                rc.append(math.sqrt(ra * rb))  # log-mean centre: equal half resistances
                cap.append(lay.density * lay.specific_heat * math.pi * (rb**2 - ra**2) * self.L)
        self.faces = np.array(faces)
        self.k = np.array(k)
        self.rc = np.array(rc)
        self._cap = np.array(cap)
        twopiL = 2.0 * math.pi * self.L
        # half-cell resistances, inner half and outer half of each cell [K/W]
        self.R_in_half = np.log(self.rc / self.faces[:-1]) / (twopiL * self.k)
        self.R_out_half = np.log(self.faces[1:] / self.rc) / (twopiL * self.k)
        self.R_between = self.R_out_half[:-1] + self.R_in_half[1:]
        self.outer_area = twopiL * self.faces[-1]

    @property
    def n_nodes(self):
        return self.k.size

    @property
    def heat_capacity(self):
        return self._cap

    @property
    def mass(self):
        return float(sum(l.density * math.pi * ((r + l.thickness) ** 2 - r**2) * self.L
                         for l, r in zip(self.layers, self._layer_inner_radii())))

    def _layer_inner_radii(self):
        r, out = self.inner_radius, []
        for l in self.layers:
            out.append(r)
            r += l.thickness
        return out

    def inner_resistance(self):
        return float(self.R_in_half[0])

    def outer_resistance(self):
        return float(self.R_out_half[-1])

    def steady_resistance(self):
        """Σ ln(r_out/r_in)/(2π k L) over the layers [K/W] (analytic, Incropera Eq. 3.28)."""
        return float(sum(math.log((r + l.thickness) / r) / (2.0 * math.pi * l.conductivity * self.L)
                         for l, r in zip(self.layers, self._layer_inner_radii())))

    def conduction(self, Tw):
        """Net conduction into each cell [W] from its neighbours (H2, finite volumes)."""
        q = np.diff(Tw) / self.R_between  # flow from cell j+1 into cell j
        out = np.zeros_like(Tw)
        out[:-1] += q
        out[1:] -= q
        return out

    def describe(self):
        parts = ", ".join(f"{l.name or 'layer'} {l.thickness * 1e3:g} mm k={l.conductivity:g}"
                          for l in self.layers)
        return f"layered wall r_in = {self.inner_radius:g} m: {parts}"


def surface_exchange(h, area, T_fluid, T_node, R_half):
    """Heat flow from a fluid into a wall node through a film and a half cell [W]:
    Q = (T_fluid − T_node) / (1/(h A) + R_half); 0 when h A = 0."""
    hA = h * area
    if hA <= 0.0:
        return 0.0
    return (T_fluid - T_node) / (1.0 / hA + R_half)
