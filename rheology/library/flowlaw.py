"""Flow laws and rocks as data: the objects the reference tables load into.

A :class:`FlowLaw` holds one published creep relation converted to SI (stress in Pa,
grain size in m, water fugacity in Pa) together with its provenance. A :class:`Rock`
is the set of laws that act in parallel in one rock type (e.g. dislocation creep,
diffusion creep and low-temperature plasticity of dry olivine).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from rheology.errors import RheologyError
from rheology.physics import creep

Mechanism = Literal["dislocation", "diffusion", "peierls"]
WaterForm = Literal["none", "folded", "fugacity", "OH"]
Status = Literal["checked", "from memory"]

MECHANISMS = ("dislocation", "diffusion", "peierls")
WATER_FORMS = ("none", "folded", "fugacity", "OH")
STATUSES = ("checked", "from memory")


@dataclass(frozen=True)
class FlowLaw:
    """One laboratory creep law in the triaxial convention, in SI units.

    Power laws (dislocation, diffusion) read
    ``strain_rate = A * stress**n * grain_size**-p * water**r * exp(-(Q + P V) / (R T))``;
    low-temperature plasticity (``mechanism == "peierls"``) reads
    ``strain_rate = A * stress**n * exp(-(Q + P V)/(R T) * (1 - (stress/sP)**p)**q)``
    with sP = ``peierls_stress``, p = ``peierls_p``, q = ``peierls_q``.
    ``stress`` is the differential stress sigma1 - sigma3 [Pa] and ``strain_rate`` the
    axial strain rate [1/s] of a triaxial test.

    Attributes
    ----------
    id, rock, mechanism : str
        Identifier of our own, rock name, and mechanism.
    A : float
        Pre-exponential factor in SI [Pa^-(n+r) m^p s^-1] (``r`` counts only when
        ``water_form == "fugacity"``).
    n, grain_size_exponent, water_exponent : float
        Stress exponent n, grain-size exponent p, water exponent r.
    Q, V : float
        Activation energy [J/mol] and volume [m^3/mol].
    water_form : {"none", "folded", "fugacity", "OH"}
        How water enters: not at all, folded into A, as water fugacity [Pa] to the power
        r, or as OH content [H/10^6 Si] to the power r.
    peierls_stress, peierls_p, peierls_q, min_stress : float
        Peierls stress [Pa], the exponents p and q, and the lowest differential stress
        [Pa] at which the law is applied (0 for none).
    A_published : str
        A as published, with its units (e.g. ``"1.1e-4 MPa^-4 s^-1"``).
    uncertainty : dict
        One-sigma uncertainties where published, keys ``log10_A`` (dex), ``n``,
        ``Q`` [J/mol], ``V`` [m^3/mol].
    experimental_range : str
        Conditions of the experiments (temperature, pressure, stress, grain size).
    citation, location, status, notes : str
        Full citation, table or equation, ``"checked"`` or ``"from memory"``, notes.
    """

    id: str
    rock: str
    mechanism: Mechanism
    A: float
    n: float
    Q: float
    V: float = 0.0
    grain_size_exponent: float = 0.0
    water_exponent: float = 0.0
    water_form: WaterForm = "none"
    peierls_stress: float = np.inf
    peierls_p: float = 1.0
    peierls_q: float = 2.0
    min_stress: float = 0.0
    A_published: str = ""
    uncertainty: dict = field(default_factory=dict)
    experimental_range: str = ""
    citation: str = ""
    location: str = ""
    status: Status = "from memory"
    notes: str = ""

    @property
    def needs_grain_size(self) -> bool:
        """True when the law depends on grain size (p != 0)."""
        return self.grain_size_exponent != 0.0

    @property
    def needs_water(self) -> bool:
        """True when the law needs an explicit water fugacity or OH content."""
        return self.water_form in ("fugacity", "OH") and self.water_exponent != 0.0

    def prefactor(self, grain_size=None, water=None):
        """A with grain size and water folded in [Pa^-n s^-1].

        Raises
        ------
        RheologyError
            When the law needs a grain size or a water value that was not given.
        """
        factor = np.asarray(self.A, dtype=float)
        if self.needs_grain_size:
            if grain_size is None:
                raise RheologyError(
                    f"flow law {self.id!r} ({self.mechanism} creep) depends on grain size "
                    f"(exponent p = {self.grain_size_exponent:g}); give grain_size, e.g. '1 mm'"
                )
            grain_size = np.asarray(grain_size, dtype=float)
            if np.any(~np.isfinite(grain_size)) or np.any(grain_size <= 0):
                raise RheologyError(
                    f"flow law {self.id!r}: grain_size must be a positive length, got {grain_size}"
                )
            factor = factor * grain_size ** (-self.grain_size_exponent)
        if self.needs_water:
            what = (
                "water fugacity (e.g. '500 MPa')"
                if self.water_form == "fugacity"
                else ("OH content in H/10^6 Si (e.g. 1000)")
            )
            if water is None:
                raise RheologyError(
                    f"flow law {self.id!r} has a water exponent r = {self.water_exponent:g}; "
                    f"give {what}: there is no default"
                )
            water = np.asarray(water, dtype=float)
            if np.any(~np.isfinite(water)) or np.any(water <= 0):
                raise RheologyError(f"flow law {self.id!r}: {what} must be positive, got {water}")
            factor = factor * water**self.water_exponent
        return factor

    def strain_rate(self, stress, temperature, pressure, grain_size=None, water=None):
        """Axial strain rate [1/s] at differential stress [Pa], T [K], pressure [Pa]."""
        prefactor = self.prefactor(grain_size, water)
        if self.mechanism == "peierls":
            return creep.peierls_strain_rate(
                stress,
                temperature,
                pressure,
                prefactor,
                self.n,
                self.Q,
                self.V,
                self.peierls_stress,
                self.peierls_p,
                self.peierls_q,
                self.min_stress,
            )
        return creep.power_law_strain_rate(
            stress, temperature, pressure, prefactor, self.n, self.Q, self.V
        )

    def stress(self, strain_rate, temperature, pressure, grain_size=None, water=None):
        """Differential stress [Pa] that drives ``strain_rate`` [1/s] at T [K], pressure [Pa]."""
        return creep.composite_stress(
            strain_rate, temperature, pressure, [self.term(grain_size, water)]
        ).stress

    def term(self, grain_size=None, water=None, scale=1.0):
        """The law as a :class:`rheology.physics.creep.CreepTerm` for the composite solver.

        ``scale`` multiplies A (used by Monte Carlo draws of log10 A).
        """
        prefactor = self.prefactor(grain_size, water) * scale
        if self.mechanism == "peierls":
            return creep.CreepTerm.peierls(
                prefactor,
                self.n,
                self.Q,
                self.V,
                self.peierls_stress,
                self.peierls_p,
                self.peierls_q,
                self.min_stress,
            )
        return creep.CreepTerm.power_law(prefactor, self.n, self.Q, self.V)


@dataclass(frozen=True)
class Rock:
    """A rock type: flow laws acting in parallel, and its typical physical properties.

    Attributes
    ----------
    id, name : str
        Identifier of our own and a readable name.
    laws : tuple of FlowLaw
        The mechanisms combined in composite creep.
    properties : str
        Id of the row in the rock-properties table (density, conductivity...).
    description : str
        Which laws, and when to use the rock.
    """

    id: str
    name: str
    laws: tuple[FlowLaw, ...]
    properties: str = ""
    description: str = ""

    @property
    def needs_grain_size(self) -> bool:
        """True when any of the rock's laws depends on grain size."""
        return any(law.needs_grain_size for law in self.laws)

    @property
    def needs_water(self) -> bool:
        """True when any of the rock's laws needs an explicit water value."""
        return any(law.needs_water for law in self.laws)


@dataclass(frozen=True)
class RockProperties:
    """Typical physical properties of a lithology, with their source.

    Attributes
    ----------
    id, name : str
        Identifier and name.
    density [kg/m^3], conductivity [W/m/K], heat_production [W/m^3], shear_modulus [Pa] : float
    citation, status, notes : str
    """

    id: str
    name: str
    density: float
    conductivity: float
    heat_production: float
    shear_modulus: float
    citation: str = ""
    status: Status = "from memory"
    notes: str = ""
