"""Electrochemical quantities of a reaction with n electrons (pure numpy, no I/O).

From the reaction's standard properties (e.g. Bard & Faulkner, Electrochemical Methods,
2nd ed., 2001, sec. 2.1; thermoneutral voltage as in LeRoy, Bowen & LeRoy 1980,
J. Electrochem. Soc. 127, 1954):

    E°(T)  = -drG°(T) / (n F)     standard reversible voltage (negative: not spontaneous),
    Etn(T) =  drH°(T) / (n F)     thermoneutral voltage,
    q_rev  =  T drS°(T)           reversible heat absorbed per mol of reaction, kJ/mol.

Voltage efficiency at an operating cell voltage V (V > 0), by the convention used here:

* electrolysis (drG° > 0, driven by the applied voltage):  eta_V = |E°| / V, and the
  thermal (enthalpy) efficiency eta_th = |Etn| / V (above 1 when V < |Etn|: the cell takes
  in heat);
* galvanic cell (drG° < 0, delivering work):  eta_V = V / |E°|, eta_th = V / |Etn|.

The E° here is that of the reaction as written at standard activities (gases at P°), not a
cell at operating concentrations.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from generator.model import Species
from generator.thermo.constants import F
from generator.thermo.reactions import reaction_functions


@dataclass(frozen=True, eq=False)
class CellVoltages:
    """Arrays over T (K): E° and Etn in V, reversible heat T·drS° in kJ/mol (and as a
    voltage, T·drS°/(nF), in V); mode per T: "electrolysis" or "galvanic"."""

    T: np.ndarray
    electrons: int
    E: np.ndarray
    Etn: np.ndarray
    reversible_heat: np.ndarray
    reversible_heat_V: np.ndarray
    mode: tuple[str, ...]
    extrapolated: np.ndarray


@dataclass(frozen=True)
class VoltageEfficiency:
    """Efficiencies (fractions) at operating voltage V (V) for one E° and Etn."""

    V: float
    mode: str
    eta_V: float
    eta_thermal: float


def cell_voltages(nu: Mapping[str, float], species: Mapping[str, Species],
                  T: float | Sequence[float] | np.ndarray, electrons: int) -> CellVoltages:
    """E°, Etn and the reversible heat over T for the reaction ``nu`` with n electrons."""
    if electrons < 1:
        raise ValueError("electrons must be at least 1")
    rf = reaction_functions(nu, species, T, electrons)
    nF = electrons * F
    return CellVoltages(
        T=rf.T, electrons=electrons, E=np.asarray(rf.E), Etn=np.asarray(rf.Etn),
        reversible_heat=rf.TdrS, reversible_heat_V=1000.0 * rf.TdrS / nF,
        mode=tuple(cell_mode(g) for g in rf.drG), extrapolated=rf.extrapolated)


def cell_mode(drG: float) -> str:
    """"electrolysis" when drG° > 0 (work must be put in), else "galvanic"."""
    return "electrolysis" if drG > 0 else "galvanic"


def voltage_efficiency(E: float, Etn: float, V: float) -> VoltageEfficiency:
    """Voltage and thermal efficiency at operating voltage ``V`` (see the module docstring);
    E = -drG/(nF) < 0 marks an electrolysis."""
    if not (np.isfinite(V) and V > 0):
        raise ValueError("the operating voltage must be a positive number of volts")
    if E < 0:
        return VoltageEfficiency(V, "electrolysis", abs(E) / V, abs(Etn) / V)
    return VoltageEfficiency(V, "galvanic", V / E if E > 0 else float("nan"),
                             V / abs(Etn) if Etn else float("nan"))


__all__ = ["CellVoltages", "VoltageEfficiency", "cell_voltages", "cell_mode",
           "voltage_efficiency"]
