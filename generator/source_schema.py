"""The fields of each kind of source file, described once.

The loader checks unknown and missing fields against these tables and ``thermofolio
schema`` turns them into a JSON Schema for editors.  Each entry is
``name: (required, JSON-Schema fragment, description)``.
"""

from __future__ import annotations

from typing import Any

_NUM = {"type": "number"}
_STR = {"type": "string"}
_SLUG_PATTERN = "^[a-z0-9][a-z0-9._-]*$"
_SLUG = {"type": "string", "pattern": _SLUG_PATTERN}
_STRS = {"type": "array", "items": _STR}
_RANGE = {"type": "array", "items": _NUM, "minItems": 2, "maxItems": 2}

VALUE_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "value": (True, _NUM, "the number, in `unit`"),
    "unc": (False, _NUM, "standard uncertainty (GUM), in `unit`"),
    "unit": (True, _STR, "e.g. kJ/mol or J/(mol*K)"),
    "ref": (False, _SLUG, "reference key; default: the file's `ref`"),
    "preferred": (False, {"type": "boolean"}, "mark the value used when several are given"),
    "note": (False, _STR, "a remark on this value"),
}
_COMPACT = {"type": "string", "description": '"<number> ± <unc> <unit>"'}
_VALUE_MAP = {
    "type": "object",
    "properties": {k: dict(v[1], description=v[2]) for k, v in VALUE_FIELDS.items()},
    "required": [k for k, v in VALUE_FIELDS.items() if v[0]],
    "additionalProperties": False,
}
_ONE_VALUE = {"anyOf": [_COMPACT, _VALUE_MAP]}
_VALUE = {"anyOf": [_COMPACT, _VALUE_MAP, {"type": "array", "items": _ONE_VALUE, "minItems": 1}]}

REVIEW_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "status": (True, {"enum": ["draft", "checked", "approved"]}, "review state"),
    "by": (False, _STR, "who reviewed"),
    "date": (False, _STR, "ISO date of the review, YYYY-MM-DD"),
    "note": (False, _STR, "what was checked, or what is pending"),
    "digest": (False, _STR, "digest of the reviewed content (written by `thermofolio review`)"),
}
_REVIEW = {
    "type": "object",
    "properties": {k: dict(v[1], description=v[2]) for k, v in REVIEW_FIELDS.items()},
    "required": ["status"],
    "additionalProperties": False,
}

HANDBOOK_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "title": (True, _STR, "handbook title"),
    "edition": (True, _STR, "edition, quoted so YAML keeps it as text"),
    "organisation": (True, _STR, "who publishes it"),
    "standard_pressure": (False, _STR, "standard pressure, default 1 bar"),
    "temperatures": (False, {"type": "array", "items": _NUM}, "table grid, K"),
    "units": (False, {"type": "object"}, "display units"),
    "caution": (False, _STR, "caution text shown on every page and in calc"),
    "tolerances": (False, {"type": "object"}, "check tolerances"),
    "review_interval_days": (False, {"type": "integer"}, "reviews older than this are flagged"),
    "adiabatic_caution_K": (False, _NUM, "adiabatic rise above which a sheet warns"),
    "families": (False, {"type": "object", "additionalProperties": {
        "type": "object", "properties": {"title": _STR, "per": _SLUG},
        "additionalProperties": False}},
        "family charts: per family a title and the species id to normalise per mole of"),
    "ref": (False, _SLUG, "default reference"),
}

REFERENCE_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "key": (True, _SLUG, "the key values cite"),
    "citation": (True, _STR, "full citation"),
    "kind": (True, {"enum": ["book", "article", "report", "measurement", "estimate"]}, "kind"),
    "standard_pressure": (False, _STR, "pressure its values are quoted at, default 1 bar"),
    "doi": (False, _STR, "DOI"),
    "url": (False, _STR, "URL"),
    "note": (False, _STR, "remark"),
}

CP_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "constant": (False, _NUM, "Cp in J/(mol*K)"),
    "shomate": (False, {"type": "array", "items": _NUM, "minItems": 8, "maxItems": 8}, "A..H"),
    "nasa7": (False, {"type": "array", "items": _NUM, "minItems": 7, "maxItems": 7}, "a1..a7"),
    "nasa9": (
        False,
        {"type": "array", "items": _NUM, "minItems": 9, "maxItems": 9},
        "a1..a7, b1, b2",
    ),
    "table": (False, {"type": "object"}, "columns T (K) and Cp (J/(mol*K))"),
    "T": (True, _RANGE, "[min, max] in K"),
    "ref": (False, _SLUG, "reference key"),
    "note": (False, _STR, "remark"),
}

SPECIES_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "ref": (False, _SLUG, "default reference for this file"),
    "id": (True, _SLUG, "unique lowercase slug"),
    "formula": (True, _STR, "e.g. CaCO3, CuSO4*5H2O, SO4^2-"),
    "phase": (True, {"enum": ["g", "l", "cr", "s", "aq"]}, "phase"),
    "form": (False, _STR, "polymorph, with phase cr"),
    "name": (True, _STR, "name"),
    "cas": (False, _STR, "CAS registry number"),
    "aliases": (False, _STRS, "other names"),
    "standard": (False, {"type": "object"}, "values at 298.15 K: dfH, S, dfG, Cp"),
    "cp": (False, {"type": "array", "items": {"type": "object"}}, "heat-capacity pieces"),
    "review": (False, _REVIEW, "review state"),
    "notes": (False, _STR, "Markdown"),
}
STANDARD_FIELDS = ("dfH", "S", "dfG", "Cp")

MEASURED_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "quantity": (True, {"enum": ["drH", "drS", "drG", "K"]}, "what was measured"),
    "value": (True, _NUM, "the number"),
    "unc": (False, _NUM, "standard uncertainty"),
    "unit": (False, _STR, "unit (none for K)"),
    "T": (False, _NUM, "temperature, K; default 298.15"),
    "ref": (False, _SLUG, "reference key"),
    "note": (False, _STR, "remark"),
}
COMBINE_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "reaction": (True, _SLUG, "id of a reaction"),
    "factor": (True, _NUM, "multiplier"),
}
REACTION_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "ref": (False, _SLUG, "default reference for this file"),
    "id": (True, _SLUG, "unique lowercase slug"),
    "name": (True, _STR, "name"),
    "equation": (False, _STR, "e.g. CaCO3(cr) -> CaO(cr) + CO2(g)"),
    "measured": (False, {"type": "array"}, "measured values"),
    "combine": (False, {"type": "array"}, "Hess's law definition"),
    "electrons": (False, {"type": "integer", "minimum": 1}, "electrons transferred"),
    "family": (False, _STRS, "family tags"),
    "conditions": (False, {"type": "object"}, "feeds, pressures, temperature range"),
    "review": (False, _REVIEW, "review state"),
    "notes": (False, _STR, "Markdown"),
}
SLUG_PATTERN = _SLUG_PATTERN


def _object(fields: dict[str, tuple[bool, dict, str]], title: str, **extra: Any) -> dict:
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "title": title,
        "type": "object",
        "properties": {k: dict(v[1], description=v[2]) for k, v in fields.items()},
        "required": [k for k, v in fields.items() if v[0]],
        "additionalProperties": False,
        **extra,
    }


def json_schemas() -> dict[str, dict]:
    """JSON Schemas, by file name, for the handbook's source files."""
    species = _object(SPECIES_FIELDS, "thermofolio species")
    species["properties"]["standard"] = {
        "type": "object",
        "properties": {k: _VALUE for k in STANDARD_FIELDS},
        "additionalProperties": False,
    }
    species["properties"]["cp"]["items"] = {
        "type": "object",
        "properties": {k: dict(v[1], description=v[2]) for k, v in CP_FIELDS.items()},
        "required": ["T"],
        "additionalProperties": False,
    }
    reaction = _object(REACTION_FIELDS, "thermofolio reaction")
    reaction["properties"]["measured"]["items"] = {
        "type": "object",
        "properties": {k: dict(v[1], description=v[2]) for k, v in MEASURED_FIELDS.items()},
        "required": ["quantity", "value"],
        "additionalProperties": False,
    }
    reaction["properties"]["combine"]["items"] = {
        "type": "object",
        "properties": {k: dict(v[1], description=v[2]) for k, v in COMBINE_FIELDS.items()},
        "required": ["reaction", "factor"],
        "additionalProperties": False,
    }
    reaction["anyOf"] = [{"required": ["equation"]}, {"required": ["combine"]}]
    reference = {k: dict(v[1], description=v[2]) for k, v in REFERENCE_FIELDS.items()}
    references = {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "title": "thermofolio references",
        "type": "array",
        "items": {
            "type": "object",
            "properties": reference,
            "required": [k for k, v in REFERENCE_FIELDS.items() if v[0]],
            "additionalProperties": False,
        },
    }
    return {
        "handbook.schema.json": _object(HANDBOOK_FIELDS, "thermofolio handbook settings"),
        "references.schema.json": references,
        "species.schema.json": species,
        "reaction.schema.json": reaction,
    }
