"""The data model, defined once: frozen value classes built by the loader from the sources.

Canonical units inside the model (whatever the source file wrote):
enthalpies and Gibbs energies in kJ/mol, entropies and heat capacities in J/(mol*K),
temperatures in K, pressures in Pa.  Every value keeps where it was written.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

from generator.diagnostics import Location

Phase = Literal["g", "l", "cr", "s", "aq"]
PHASES: tuple[str, ...] = ("g", "l", "cr", "s", "aq")
ReviewStatus = Literal["draft", "checked", "approved"]
REVIEW_STATUSES: tuple[str, ...] = ("draft", "checked", "approved")
REFERENCE_KINDS: tuple[str, ...] = ("book", "article", "report", "measurement", "estimate")
CP_KINDS: tuple[str, ...] = ("constant", "shomate", "nasa7", "nasa9", "table")

# Canonical unit of each standard quantity and of each measured reaction quantity.
SPECIES_QUANTITIES: Mapping[str, str] = {
    "dfH": "kJ/mol",
    "dfG": "kJ/mol",
    "S": "J/(mol*K)",
    "Cp": "J/(mol*K)",
}
DEFAULT_TOLERANCES: Mapping[str, float] = {
    "gibbs_kJ": 1.0,  # |dfG - (dfH - T*dfS)|, or twice the combined uncertainty if larger
    "hess_kJ": 2.0,  # measured vs formation-data reaction value, at least 2 u_c
    "polynomial_H_kJ": 0.5,  # fit's own H(298.15) vs the standard dfH
    "polynomial_S_J": 0.5,  # fit's own S(298.15) vs the standard S
    "jump_Cp_J": 1.0,  # Cp step between adjacent pieces
    "jump_H_kJ": 0.05,  # fit enthalpy step between adjacent pieces
    "jump_S_J": 0.1,  # fit entropy step between adjacent pieces
}
REACTION_QUANTITIES: Mapping[str, str] = {
    "drH": "kJ/mol",
    "drG": "kJ/mol",
    "drS": "J/(mol*K)",
    "K": "",
}


@dataclass(frozen=True)
class Value:
    """One cited number in canonical units, with its standard uncertainty (GUM) if known."""

    value: float
    unit: str
    unc: float | None = None
    ref: str | None = None
    preferred: bool = False
    written: str = ""  # the text as written in the source, for display and audit
    location: Location | None = None
    from_memory: bool = False  # the source says the value awaits checking against print
    # Standard-state conversion applied to this value (filled in by the engine's
    # standard-state step; empty when none was needed).
    conversion: str = ""
    conversion_delta: float = 0.0


@dataclass(frozen=True)
class Quantity:
    """A property with one or several cited values; ``preferred`` is the one used."""

    name: str
    values: tuple[Value, ...]
    location: Location | None = None

    @property
    def preferred(self) -> Value:
        """The marked value; without a mark, the one with the smallest stated uncertainty,
        ties (and values with no uncertainty) broken by the order in the file."""
        marked = [v for v in self.values if v.preferred]
        if marked:
            return marked[0]
        with_unc = [v for v in self.values if v.unc is not None]
        if with_unc:
            return min(with_unc, key=lambda v: v.unc)  # min() keeps the first of ties
        return self.values[0]

    @property
    def preference_rule(self) -> str:
        if any(v.preferred for v in self.values):
            return "marked preferred: true in the source"
        if len(self.values) == 1:
            return "only value"
        return "smallest stated uncertainty (first in file on a tie)"


@dataclass(frozen=True)
class CpPiece:
    """One temperature piece of a heat-capacity fit, valid on [Tmin, Tmax] K.

    ``coeffs`` by kind: constant (Cp,); shomate (A..H), t = T/1000 K;
    nasa7 (a1..a7); nasa9 (a1..a7, b1, b2).  ``table`` uses ``table_T``/``table_Cp``.
    """

    kind: str
    Tmin: float
    Tmax: float
    coeffs: tuple[float, ...] = ()
    table_T: tuple[float, ...] = ()
    table_Cp: tuple[float, ...] = ()
    ref: str | None = None
    location: Location | None = None


@dataclass(frozen=True)
class Review:
    status: str = "draft"
    by: str | None = None
    date: str | None = None  # ISO date as written
    note: str = ""
    digest: str | None = None  # digest of the reviewed content, when recorded
    location: Location | None = None


@dataclass(frozen=True)
class Reference:
    key: str
    citation: str
    kind: str
    standard_pressure: float = 1.0e5  # Pa
    doi: str | None = None
    url: str | None = None
    location: Location | None = None
    origin: str = "yaml"  # "yaml" or "bib"


@dataclass(frozen=True)
class Species:
    id: str
    formula: str
    phase: str
    name: str
    elements: tuple[tuple[str, int], ...]  # in formula order
    charge: int
    molar_mass: float  # g/mol
    standard: Mapping[str, Quantity]
    cp: tuple[CpPiece, ...] = ()
    form: str | None = None
    cas: str | None = None
    aliases: tuple[str, ...] = ()
    review: Review = field(default_factory=Review)
    notes: str = ""
    ref: str | None = None  # the file's default reference
    path: str = ""
    location: Location | None = None
    content_digest: str | None = None  # generator.digest of the parsed file minus its review

    @property
    def element_counts(self) -> dict[str, int]:
        return dict(self.elements)

    @property
    def Tmin(self) -> float | None:
        return min((p.Tmin for p in self.cp), default=None)

    @property
    def Tmax(self) -> float | None:
        return max((p.Tmax for p in self.cp), default=None)


@dataclass(frozen=True)
class Term:
    """One species in an equation; ``nu`` is positive on either side (see Reaction)."""

    nu: float
    species: str  # species id
    written: str  # as written, e.g. "2 H2O(g)"
    location: Location | None = None


@dataclass(frozen=True)
class Measured:
    """A measured reaction value (drH, drS, drG or K) at temperature T."""

    quantity: str
    value: Value
    T: float = 298.15
    location: Location | None = None


@dataclass(frozen=True)
class CombineStep:
    reaction: str
    factor: float
    location: Location | None = None


@dataclass(frozen=True)
class Feed:
    """One feed of a reaction's ``conditions:``: moles of each species, inerts allowed.

    ``species`` holds species ids once the loader has resolved the names (``written``
    keeps them as written in the source, in file order)."""

    species: tuple[str, ...]
    moles: tuple[float, ...]
    written: tuple[str, ...] = ()
    location: Location | None = None
    name_locations: tuple[Location | None, ...] = ()

    @property
    def amounts(self) -> dict[str, float]:
        """Species id -> mol (a species named twice is summed)."""
        out: dict[str, float] = {}
        for sid, n in zip(self.species, self.moles, strict=True):
            out[sid] = out.get(sid, 0.0) + n
        return out

    @property
    def label(self) -> str:
        """The feed as written, e.g. ``CH4 1 + H2O 3 + N2 0.1``."""
        names = self.written or self.species
        return " + ".join(f"{w} {n:g}" for w, n in zip(names, self.moles, strict=True))


@dataclass(frozen=True)
class Conditions:
    """A reaction's ``conditions:``: feeds, total pressures (Pa) and the temperature range
    (K) its sheet shows equilibrium conversion over; ``T_in`` (K) is the feed temperature
    for the adiabatic rise; ``voltage`` (V) the operating cell voltage an electrochemical
    sheet shows the efficiencies at.  No feeds: the reactants in stoichiometric amounts."""

    feeds: tuple[Feed, ...] = ()
    pressures: tuple[float, ...] = (1.0e5,)
    T_range: tuple[float, float] | None = None
    T_in: float = 298.15
    voltage: float | None = None
    location: Location | None = None


@dataclass(frozen=True)
class Reaction:
    id: str
    name: str
    equation: str
    reactants: tuple[Term, ...]
    products: tuple[Term, ...]
    measured: tuple[Measured, ...] = ()
    combine: tuple[CombineStep, ...] = ()
    electrons: int | None = None
    family: tuple[str, ...] = ()
    review: Review = field(default_factory=Review)
    notes: str = ""
    ref: str | None = None
    path: str = ""
    location: Location | None = None
    conditions: Conditions | None = None
    content_digest: str | None = None  # generator.digest of the parsed file minus its review

    @property
    def stoichiometry(self) -> dict[str, float]:
        """Net stoichiometric numbers: negative for reactants, positive for products."""
        nu: dict[str, float] = {}
        for t in self.reactants:
            nu[t.species] = nu.get(t.species, 0.0) - t.nu
        for t in self.products:
            nu[t.species] = nu.get(t.species, 0.0) + t.nu
        return {k: v for k, v in nu.items() if v != 0.0}


@dataclass(frozen=True)
class Family:
    """A reaction family's chart: ΔrG° of each member per mole of ``per`` (a species id);
    without ``per``, per mole of reaction as written."""

    name: str
    title: str = ""
    per: str | None = None
    location: Location | None = None


@dataclass(frozen=True)
class Settings:
    """``handbook.yaml``."""

    title: str
    edition: str
    organisation: str
    standard_pressure: float = 1.0e5  # Pa
    temperatures: tuple[float, ...] = (298.15, 300.0, 400.0, 500.0, 600.0, 800.0, 1000.0)
    units: Mapping[str, str] = field(default_factory=dict)
    caution: str = ""
    tolerances: Mapping[str, float] = field(default_factory=dict)
    review_interval_days: int = 365
    adiabatic_caution_K: float = 200.0
    families: Mapping[str, Family] = field(default_factory=dict)
    location: Location | None = None


@dataclass(frozen=True)
class Handbook:
    root: str
    settings: Settings
    references: Mapping[str, Reference]
    species: Mapping[str, Species]
    reactions: Mapping[str, Reaction]
