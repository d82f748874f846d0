"""The species thermo engine: constants, Cp models, species and formation properties at T,
element reference states.  Pure numpy computation, no I/O."""

from generator.thermo.constants import LN10, N_A, P_ATM, P_BAR, T_REF, F, R
from generator.thermo.cp_models import (
    absolute_H_S,
    cp,
    delta_H,
    delta_S,
    h_antiderivative,
    s_antiderivative,
)
from generator.thermo.reference_states import (
    REFERENCE_STATES,
    elements_needed,
    reference_state,
    resolve_reference_states,
)
from generator.thermo.species_props import (
    FormationFunctions,
    SpeciesFunctions,
    formation_coefficients,
    formation_functions,
    species_functions,
    standard_value,
    u_combined,
    u_linear,
)

__all__ = [
    "F",
    "LN10",
    "N_A",
    "P_ATM",
    "P_BAR",
    "R",
    "T_REF",
    "REFERENCE_STATES",
    "FormationFunctions",
    "SpeciesFunctions",
    "absolute_H_S",
    "cp",
    "delta_H",
    "delta_S",
    "elements_needed",
    "formation_coefficients",
    "formation_functions",
    "h_antiderivative",
    "reference_state",
    "resolve_reference_states",
    "s_antiderivative",
    "species_functions",
    "standard_value",
    "u_combined",
    "u_linear",
]
