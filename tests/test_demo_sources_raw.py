"""Raw checks on the bundled demo handbook in ``sources/``, independent of the loader.

Every file must parse with ``yaml.safe_load`` (plus a duplicate-key guard), the counts the
demo promises must hold, and every equation must balance in elements and charge.  The
formula and equation parsing here is a deliberately small stand-in, not the loader's.
"""

from __future__ import annotations

import os
import re
from fractions import Fraction
from pathlib import Path

import pytest
import yaml

SOURCES = Path(__file__).resolve().parent.parent / "sources"


class _StrictLoader(yaml.SafeLoader):
    """safe_load that refuses duplicate keys (as the format demands)."""


def _construct_mapping(loader: yaml.SafeLoader, node: yaml.MappingNode, deep: bool = False):
    keys = set()
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=deep)
        if key in keys:
            raise yaml.constructor.ConstructorError(
                None, None, f"duplicate key {key!r}", key_node.start_mark
            )
        keys.add(key)
    return yaml.SafeLoader.construct_mapping(loader, node, deep=deep)


_StrictLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)


def _load(path: Path):
    text = path.read_text(encoding="utf-8")
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        if isinstance(event, yaml.AliasEvent) or getattr(event, "anchor", None):
            raise AssertionError(f"{path.name}: anchors/aliases are not allowed")
    return yaml.load(text, Loader=_StrictLoader)


def _all(folder: str) -> dict[str, dict]:
    return {p.stem: _load(p) for p in sorted((SOURCES / folder).glob("*.yaml"))}


@pytest.fixture(scope="module")
def species() -> dict[str, dict]:
    return _all("species")


@pytest.fixture(scope="module")
def reactions() -> dict[str, dict]:
    return _all("reactions")


@pytest.fixture(scope="module")
def references() -> dict[str, dict]:
    refs = {r["key"]: r for r in _load(SOURCES / "references.yaml")}
    bib = (SOURCES / "references.bib").read_text(encoding="utf-8")
    for entry_type, key in re.findall(r"@(\w+)\s*\{\s*([^,\s]+)\s*,", bib):
        assert key not in refs, f"{key} defined in both references.yaml and references.bib"
        body = bib.split(f"{{{key},", 1)[1].split("\n}", 1)[0]
        m = re.search(r"standard_pressure\s*=\s*\{([^}]*)\}", body)
        refs[key] = {"key": key, "kind": entry_type.lower(),
                     "standard_pressure": m.group(1) if m else "1 bar"}
    return refs


# ---- a small formula / equation reader, for balancing only --------------------------------

_CHARGE = re.compile(r"^(?P<body>.*?)(?:\^(?P<n>\d+)(?P<s1>[+-])|(?P<s2>[+-]))$")


def parse_formula(formula: str) -> tuple[dict[str, int], int]:
    """Element counts and charge of e.g. ``Ca(OH)2``, ``SO4^2-``, ``H+``."""
    m = _CHARGE.match(formula)
    body, charge = formula, 0
    if m and (m.group("s1") or m.group("s2")):
        body = m.group("body")
        sign = m.group("s1") or m.group("s2")
        charge = int(m.group("n") or 1) * (1 if sign == "+" else -1)
    stack: list[dict[str, int]] = [{}]
    for tok in re.findall(r"\(|\)\d*|[A-Z][a-z]?\d*", body):
        if tok == "(":
            stack.append({})
        elif tok.startswith(")"):
            group, mult = stack.pop(), int(tok[1:] or 1)
            for el, n in group.items():
                stack[-1][el] = stack[-1].get(el, 0) + n * mult
        else:
            el, n = re.match(r"([A-Z][a-z]?)(\d*)", tok).groups()
            stack[-1][el] = stack[-1].get(el, 0) + int(n or 1)
    assert len(stack) == 1, formula
    assert re.sub(r"[()\d]|[A-Z][a-z]?", "", body) == "", f"unread characters in {formula}"
    return stack[0], charge


_TERM = re.compile(
    r"^(?:(?P<nu>\d+(?:\.\d+)?(?:/\d+)?)\s+)?"
    r"(?:\{(?P<id>[a-z0-9][a-z0-9-]*)\}|(?P<formula>.+)\((?P<phase>g|l|cr|s|aq)\))$"
)


def resolve(term: str, species: dict[str, dict]) -> tuple[Fraction, str]:
    m = _TERM.match(term.strip())
    assert m, f"cannot read term {term!r}"
    nu = Fraction(m.group("nu") or "1")
    if m.group("id"):
        assert m.group("id") in species, f"unknown species id in {term!r}"
        return nu, m.group("id")
    hits = [i for i, s in species.items()
            if str(s["formula"]) == m.group("formula") and s["phase"] == m.group("phase")]
    assert len(hits) == 1, f"{term!r} matches {hits}; write {{id}}"
    return nu, hits[0]


def net_stoichiometry(equation: str, species: dict[str, dict]) -> dict[str, Fraction]:
    left, right = re.split(r"\s*(?:->|<=>|⇌|=)\s*", equation)
    nu: dict[str, Fraction] = {}
    for side, sign in ((left, -1), (right, 1)):
        for term in re.split(r"\s+\+\s+", side):
            n, sid = resolve(term, species)
            nu[sid] = nu.get(sid, Fraction(0)) + sign * n
    return {k: v for k, v in nu.items() if v != 0}


# ---- the files parse, and the handbook settings are complete -------------------------------

def test_handbook_settings():
    hb = _load(SOURCES / "handbook.yaml")
    for key in ("title", "edition", "organisation", "standard_pressure", "temperatures",
                "units", "caution", "tolerances", "review_interval_days"):
        assert key in hb, key
    assert isinstance(hb["edition"], str)
    assert hb["standard_pressure"] == "1 bar"
    # the grid the brief asked for (common practice, no source)
    assert hb["temperatures"] == [298.15, 300, 400, 500, 600, 700, 800, 900, 1000, 1100,
                                  1200, 1300, 1400, 1500]
    assert "licensed engineers" in hb["caution"]
    assert all(isinstance(v, float) for v in hb["tolerances"].values())


def test_every_file_is_a_mapping_with_matching_id(species, reactions):
    for folder, items in (("species", species), ("reactions", reactions)):
        for stem, doc in items.items():
            assert isinstance(doc, dict), f"{folder}/{stem}.yaml"
            assert doc["id"] == stem, f"{folder}/{stem}.yaml has id {doc['id']}"
            assert re.fullmatch(r"[a-z0-9][a-z0-9-]*", stem)


def test_counts(species, reactions, references):
    # minimum sizes promised for the demo (the brief; common practice, no source)
    assert len(species) >= 30
    assert len(reactions) >= 15
    assert len(references) >= 6


# ---- species --------------------------------------------------------------------------------

REFERENCE_STATES = {  # element -> (formula, phase, form)
    "H": ("H2", "g", None), "O": ("O2", "g", None), "N": ("N2", "g", None),
    "Cl": ("Cl2", "g", None), "C": ("C", "cr", "graphite"), "S": ("S", "cr", "rhombic"),
    "Ca": ("Ca", "cr", None), "Na": ("Na", "cr", None),
}


def test_reference_state_of_every_element(species):
    used = set()
    for s in species.values():
        used |= set(parse_formula(str(s["formula"]))[0])
    assert used <= set(REFERENCE_STATES), used - set(REFERENCE_STATES)
    for el in used:
        formula, phase, form = REFERENCE_STATES[el]
        hits = [s for s in species.values() if str(s["formula"]) == formula
                and s["phase"] == phase and s.get("form") == form]
        assert len(hits) == 1, el


def test_atoms_ions_and_polymorphs(species):
    have = {(str(s["formula"]), s["phase"]) for s in species.values()}
    for fp in [("H", "g"), ("O", "g"), ("N", "g"), ("C", "g"), ("H+", "aq"), ("OH-", "aq"),
               ("Na+", "aq"), ("Cl-", "aq"), ("SO4^2-", "aq")]:
        assert fp in have, fp
    forms = {s.get("form") for s in species.values() if s["formula"] == "CaCO3"}
    assert forms == {"calcite", "aragonite"}


def test_species_fields_and_values(species, references):
    for sid, s in species.items():
        for key in ("formula", "phase", "name", "standard", "review"):
            assert key in s, f"{sid}: {key}"
        assert isinstance(s["formula"], str), f"{sid}: formula read as {s['formula']!r}"
        assert s["phase"] in ("g", "l", "cr", "s", "aq")
        assert {"dfH", "S"} <= set(s["standard"]), sid
        for q, v in s["standard"].items():
            entries = v if isinstance(v, list) else [v]
            for e in entries:
                if isinstance(e, str):
                    assert re.fullmatch(r"-?\d+(\.\d+)? (± \d+(\.\d+)? )?\S+", e), (sid, q, e)
                    assert s.get("ref") in references, sid
                else:
                    assert isinstance(e["value"], (int, float)), (sid, q)
                    assert e.get("ref", s.get("ref")) in references, (sid, q)
            if isinstance(v, list):
                assert sum(bool(e.get("preferred")) for e in v) <= 1, (sid, q)
        assert isinstance(s["review"]["date"], str), sid


def test_cp_pieces(species, references):
    sizes = {"nasa7": 7, "nasa9": 9, "shomate": 8}
    kinds = set()
    for sid, s in species.items():
        last = None
        for p in s.get("cp", []):
            kind = next(k for k in p if k not in ("T", "ref"))
            kinds.add(kind)
            lo, hi = p["T"]
            assert isinstance(lo, (int, float)) and isinstance(hi, (int, float)) and lo < hi
            assert last is None or lo == last, f"{sid}: gap or overlap at {lo}"
            last = hi
            assert p.get("ref", s.get("ref")) in references, sid
            if kind in sizes:
                assert len(p[kind]) == sizes[kind], sid
                assert all(isinstance(c, float) for c in p[kind]), f"{sid}: non-float coeff"
            elif kind == "table":
                T, cp = p["table"]["T"], p["table"]["Cp"]
                assert len(T) == len(cp) and T == sorted(T) and T[0] == lo and T[-1] == hi
            else:
                assert kind == "constant" and isinstance(p["constant"], float)
    assert {"constant", "table", "nasa7", "nasa9"} <= kinds


# Which published data file each polynomial was copied from (cantera's data folder):
# nasa_gas/nasa_condensed = McBride, Gordon & Reno 1993; airNASA9 = McBride, Zehe & Gordon
# 2002; gri30 = GRI-Mech 3.0 (Smith et al. 1999).
COPIED_FROM = {
    "hydrogen": ("gri30", "H2"), "oxygen": ("airNASA9", "O2"), "nitrogen": ("airNASA9", "N2"),
    "chlorine": ("nasa_gas", "CL2"), "graphite": ("nasa_condensed", "C(gr)"),
    "sulphur-rhombic": ("nasa_condensed", "S(cr1)"), "calcium": ("nasa_condensed", "Ca(a)"),
    "sodium": ("nasa_condensed", "Na(cr)"), "hydrogen-atom": ("nasa_gas", "H"),
    "oxygen-atom": ("airNASA9", "O"), "nitrogen-atom": ("airNASA9", "N"),
    "carbon-atom": ("nasa_gas", "C"), "water-gas": ("nasa_gas", "H2O"),
    "methane": ("gri30", "CH4"), "carbon-monoxide": ("gri30", "CO"),
    "carbon-dioxide": ("gri30", "CO2"), "ammonia": ("gri30", "NH3"),
    "nitric-oxide": ("airNASA9", "NO"), "nitrogen-dioxide": ("gri30", "NO2"),
    "sulphur-dioxide": ("nasa_gas", "SO2"), "sulphur-trioxide": ("nasa_gas", "SO3"),
    "sulphuric-acid": ("nasa_condensed", "H2SO4(L)"), "hydrogen-chloride": ("nasa_gas", "HCL"),
    "methanol-gas": ("gri30", "CH3OH"), "calcite": ("nasa_condensed", "CaCO3(caL)"),
    "calcium-oxide": ("nasa_condensed", "CaO(s)"),
    "calcium-hydroxide": ("nasa_condensed", "CaO2H2(s)"),
    "sodium-chloride": ("nasa_condensed", "NaCL(s)"),
    "sodium-hydroxide": ("nasa_condensed", "NaOH(a)"),
}


def test_polynomials_copied_exactly(species):
    cantera = pytest.importorskip("cantera")
    data = Path(os.path.dirname(cantera.__file__)) / "data"
    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    files = {}
    for fname in {f for f, _ in COPIED_FROM.values()}:
        docs = yaml.load((data / f"{fname}.yaml").read_text(), Loader=loader)
        # YAML 1.1 reads the bare name NO as false
        files[fname] = {("NO" if d["name"] is False else d["name"]): d["thermo"]
                        for d in docs["species"]}
    for sid, (fname, name) in COPIED_FROM.items():
        thermo = files[fname][name]
        kind = thermo["model"].lower()
        ranges = thermo["temperature-ranges"]
        src = {(ranges[i], ranges[i + 1]): c for i, c in enumerate(thermo["data"])}
        pieces = [p for p in species[sid]["cp"] if kind in p]
        assert pieces, sid
        for p in pieces:
            assert tuple(p["T"]) in src, f"{sid}: range {p['T']} not in {fname}.yaml"
            assert p[kind] == src[tuple(p["T"])], f"{sid}: coefficients differ"


# ---- reactions ------------------------------------------------------------------------------

def test_reactions_balance(species, reactions):
    for rid, r in reactions.items():
        if "equation" not in r:
            continue
        nu = net_stoichiometry(r["equation"], species)
        totals: dict[str, Fraction] = {}
        charge = Fraction(0)
        for sid, n in nu.items():
            counts, z = parse_formula(str(species[sid]["formula"]))
            for el, k in counts.items():
                totals[el] = totals.get(el, Fraction(0)) + n * k
            charge += n * z
        assert all(v == 0 for v in totals.values()), f"{rid}: {totals}"
        assert charge == 0, f"{rid}: charge {charge}"


def test_combinations_match_their_equations(species, reactions):
    combined = [r for r in reactions.values() if r.get("combine")]
    assert combined and any("equation" in r for r in combined)
    for r in combined:
        net: dict[str, Fraction] = {}
        for step in r["combine"]:
            part = net_stoichiometry(reactions[step["reaction"]]["equation"], species)
            for sid, n in part.items():
                net[sid] = net.get(sid, Fraction(0)) + Fraction(str(step["factor"])) * n
        net = {k: v for k, v in net.items() if v != 0}
        if "equation" in r:
            assert net == net_stoichiometry(r["equation"], species), r["id"]


def test_reaction_features(reactions, references):
    assert any(isinstance(r.get("electrons"), int) for r in reactions.values())
    measured = [r for r in reactions.values() if r.get("measured")]
    assert len(measured) >= 2
    for r in measured:
        for m in r["measured"]:
            assert m["quantity"] in ("drH", "drG", "drS", "K")
            assert isinstance(m["value"], float) and m["ref"] in references
    families = {f for r in reactions.values() for f in r.get("family", [])}
    assert {"combustion", "oxidation", "sulphuric-acid", "reforming"} <= families
    for r in reactions.values():
        assert isinstance(r["review"]["date"], str), r["id"]


def test_excluded_reactions_absent(species, reactions):
    # water formation from its elements and the self-ionization of water are excluded
    # from the demo (the brief)
    water = {"water-liquid", "water-gas"}
    for rid, r in reactions.items():
        if "equation" not in r:
            continue
        nu = net_stoichiometry(r["equation"], species)
        assert set(nu) not in ({"hydrogen", "oxygen", w} for w in water), rid
        assert set(nu) != {"water-liquid", "hydrogen-ion-aq", "hydroxide-ion-aq"}, rid


# ---- the demonstration cases -----------------------------------------------------------------

def test_one_atm_reference_cited_for_a_gas_value(species, references):
    atm = {k for k, r in references.items() if r.get("standard_pressure") == "1 atm"}
    cited = {e.get("ref") for s in species.values() if s["phase"] == "g"
             for v in s["standard"].values() if isinstance(v, list) for e in v}
    assert atm & cited


def test_disputed_and_invented_values_are_labelled(species, reactions, references):
    invented = {k for k, r in references.items() if "INVENTED" in r.get("citation", "")}
    assert invented
    disputed = []
    for s in species.values():
        for v in s["standard"].values():
            if isinstance(v, list) and any(e.get("ref") in invented for e in v):
                assert any(e.get("preferred") for e in v)
                assert "invented" in s["notes"].lower()
                disputed.append(v)
    assert disputed
    for r in reactions.values():
        if any(m["ref"] in invented for m in r.get("measured", [])):
            assert "invented" in r["notes"].lower()


def test_review_notes_mark_memory_values(species):
    drafts = [s for s in species.values() if s["review"]["status"] == "draft"]
    assert drafts and all("from memory" in s["review"]["note"] for s in drafts)
