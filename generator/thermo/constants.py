"""Physical constants, CODATA 2018 adjustment.

Source: E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor, "CODATA recommended values of
the fundamental physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021).  Since the
2019 SI redefinition N_A, k_B and e are exact, hence R = N_A k_B and F = N_A e are exact too
(R = 8.314462618... J/(mol K), F = 96485.33212... C/mol).
"""

from __future__ import annotations

import math

N_A: float = 6.02214076e23  # Avogadro constant, 1/mol (exact)
k_B: float = 1.380649e-23  # Boltzmann constant, J/K (exact)
e: float = 1.602176634e-19  # elementary charge, C (exact)

R: float = N_A * k_B  # molar gas constant, J/(mol K) = 8.314462618...
F: float = N_A * e  # Faraday constant, C/mol = 96485.33212...

T_REF: float = 298.15  # standard reference temperature, K
P_ATM: float = 101325.0  # standard atmosphere, Pa (exact)
P_BAR: float = 1.0e5  # IUPAC standard pressure, 1 bar, Pa (exact)

LN10: float = math.log(10.0)

__all__ = ["N_A", "k_B", "e", "R", "F", "T_REF", "P_ATM", "P_BAR", "LN10"]
