"""Standard atomic weights of the elements, in g/mol.

Source: IUPAC CIAAW, "Standard atomic weights of the elements 2021 (IUPAC Technical
Report)", T. Prohaska et al., Pure Appl. Chem. 94 (2022) 573-600, doi:10.1515/pac-2019-0603.

* Elements with a single standard value carry that value (e.g. Na 22.98976928).
* The fourteen elements that the 2021 table gives as an interval (H, Li, B, C, N, O, Mg, Si,
  S, Cl, Ar, Br, Tl, Pb) carry the single "conventional atomic weight" CIAAW tabulates for
  them (e.g. C 12.011 for the interval [12.0096, 12.0116]).
* Elements with no stable isotope and no characteristic terrestrial isotopic composition
  (Tc, Pm, Po, At, Rn, Fr, Ra, Ac, Np, Pu and heavier) have no standard atomic weight; they
  carry the mass number of the longest-lived isotope, as the IUPAC Periodic Table of the
  Elements gives it in brackets (e.g. Tc [97]).  Th, Pa and U have standard values.

Elements 1-103 are listed; the transactinides (104-118) are left out on purpose, having no
chemistry a thermochemical handbook could tabulate.  The values were transcribed from
memory of the 2021 table (including its changes to Ar, Hf, Ir, Pb and Yb and the
atomic-mass-evaluation updates such as Ho 164.930329); check the last digit against the
printed report before quoting it.
"""

from __future__ import annotations

# (symbol, English name, standard or conventional atomic weight), by atomic number.
_TABLE: tuple[tuple[str, str, float], ...] = (
    ("H", "hydrogen", 1.008),  # conventional; interval [1.00784, 1.00811]
    ("He", "helium", 4.002602),
    ("Li", "lithium", 6.94),  # conventional; interval [6.938, 6.997]
    ("Be", "beryllium", 9.0121831),
    ("B", "boron", 10.81),  # conventional; interval [10.806, 10.821]
    ("C", "carbon", 12.011),  # conventional; interval [12.0096, 12.0116]
    ("N", "nitrogen", 14.007),  # conventional; interval [14.00643, 14.00728]
    ("O", "oxygen", 15.999),  # conventional; interval [15.99903, 15.99977]
    ("F", "fluorine", 18.998403162),
    ("Ne", "neon", 20.1797),
    ("Na", "sodium", 22.98976928),
    ("Mg", "magnesium", 24.305),  # conventional; interval [24.304, 24.307]
    ("Al", "aluminium", 26.9815384),
    ("Si", "silicon", 28.085),  # conventional; interval [28.084, 28.086]
    ("P", "phosphorus", 30.973761998),
    ("S", "sulfur", 32.06),  # conventional; interval [32.059, 32.076]
    ("Cl", "chlorine", 35.45),  # conventional; interval [35.446, 35.457]
    ("Ar", "argon", 39.95),  # conventional; interval [39.792, 39.963]
    ("K", "potassium", 39.0983),
    ("Ca", "calcium", 40.078),
    ("Sc", "scandium", 44.955907),
    ("Ti", "titanium", 47.867),
    ("V", "vanadium", 50.9415),
    ("Cr", "chromium", 51.9961),
    ("Mn", "manganese", 54.938043),
    ("Fe", "iron", 55.845),
    ("Co", "cobalt", 58.933194),
    ("Ni", "nickel", 58.6934),
    ("Cu", "copper", 63.546),
    ("Zn", "zinc", 65.38),
    ("Ga", "gallium", 69.723),
    ("Ge", "germanium", 72.630),
    ("As", "arsenic", 74.921595),
    ("Se", "selenium", 78.971),
    ("Br", "bromine", 79.904),  # conventional; interval [79.901, 79.907]
    ("Kr", "krypton", 83.798),
    ("Rb", "rubidium", 85.4678),
    ("Sr", "strontium", 87.62),
    ("Y", "yttrium", 88.905838),
    ("Zr", "zirconium", 91.224),
    ("Nb", "niobium", 92.90637),
    ("Mo", "molybdenum", 95.95),
    ("Tc", "technetium", 97.0),  # no stable isotope: [97]
    ("Ru", "ruthenium", 101.07),
    ("Rh", "rhodium", 102.90549),
    ("Pd", "palladium", 106.42),
    ("Ag", "silver", 107.8682),
    ("Cd", "cadmium", 112.414),
    ("In", "indium", 114.818),
    ("Sn", "tin", 118.710),
    ("Sb", "antimony", 121.760),
    ("Te", "tellurium", 127.60),
    ("I", "iodine", 126.90447),
    ("Xe", "xenon", 131.293),
    ("Cs", "caesium", 132.90545196),
    ("Ba", "barium", 137.327),
    ("La", "lanthanum", 138.90547),
    ("Ce", "cerium", 140.116),
    ("Pr", "praseodymium", 140.90766),
    ("Nd", "neodymium", 144.242),
    ("Pm", "promethium", 145.0),  # no stable isotope: [145]
    ("Sm", "samarium", 150.36),
    ("Eu", "europium", 151.964),
    ("Gd", "gadolinium", 157.25),
    ("Tb", "terbium", 158.925354),
    ("Dy", "dysprosium", 162.500),
    ("Ho", "holmium", 164.930329),
    ("Er", "erbium", 167.259),
    ("Tm", "thulium", 168.934219),
    ("Yb", "ytterbium", 173.045),
    ("Lu", "lutetium", 174.9668),
    ("Hf", "hafnium", 178.486),
    ("Ta", "tantalum", 180.94788),
    ("W", "tungsten", 183.84),
    ("Re", "rhenium", 186.207),
    ("Os", "osmium", 190.23),
    ("Ir", "iridium", 192.217),
    ("Pt", "platinum", 195.084),
    ("Au", "gold", 196.966570),
    ("Hg", "mercury", 200.592),
    ("Tl", "thallium", 204.38),  # conventional; interval [204.382, 204.385]
    ("Pb", "lead", 207.2),  # conventional; interval [206.14, 207.94]
    ("Bi", "bismuth", 208.98040),
    ("Po", "polonium", 209.0),  # [209]
    ("At", "astatine", 210.0),  # [210]
    ("Rn", "radon", 222.0),  # [222]
    ("Fr", "francium", 223.0),  # [223]
    ("Ra", "radium", 226.0),  # [226]
    ("Ac", "actinium", 227.0),  # [227]
    ("Th", "thorium", 232.0377),
    ("Pa", "protactinium", 231.03588),
    ("U", "uranium", 238.02891),
    ("Np", "neptunium", 237.0),  # [237]
    ("Pu", "plutonium", 244.0),  # [244]
    ("Am", "americium", 243.0),  # [243]
    ("Cm", "curium", 247.0),  # [247]
    ("Bk", "berkelium", 247.0),  # [247]
    ("Cf", "californium", 251.0),  # [251]
    ("Es", "einsteinium", 252.0),  # [252]
    ("Fm", "fermium", 257.0),  # [257]
    ("Md", "mendelevium", 258.0),  # [258]
    ("No", "nobelium", 259.0),  # [259]
    ("Lr", "lawrencium", 262.0),  # [262]
)

STANDARD_ATOMIC_WEIGHTS: dict[str, float] = {sym: mass for sym, _, mass in _TABLE}
"""Symbol -> standard (or conventional, or bracketed mass-number) atomic weight, g/mol."""

ELEMENT_NAMES: dict[str, str] = {sym: name for sym, name, _ in _TABLE}
"""Symbol -> English element name (IUPAC spelling: aluminium, caesium, sulfur)."""

ATOMIC_NUMBERS: dict[str, int] = {sym: z for z, (sym, _, _) in enumerate(_TABLE, start=1)}
"""Symbol -> atomic number Z."""
