"""Several sources per value, review coverage, completeness and uncited references."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from conftest import REPO
from generator.compute import compute_handbook
from generator.digest import canonical_json, content_digest
from generator.load import load_handbook
from generator.provenance import provenance, today_from_environment
from generator.review_edit import review_text
from generator.yamlsource import parse_yaml_text

TODAY = dt.date(2026, 12, 1)  # an arbitrary fixed "today" for review ages


def _load(root: Path):
    hb, findings = load_handbook(root)
    assert hb is not None, [f.format() for f in findings]
    return hb


def _set_dfH(root: Path, sid: str, block: str) -> None:
    f = root / "species" / f"{sid}.yaml"
    lines = f.read_text().splitlines()
    out = [ln for ln in lines if not ln.startswith("  dfH:")]
    out.insert(out.index("standard:") + 1, block)
    f.write_text("\n".join(out) + "\n")


# --- content digest ------------------------------------------------------------------------


def test_digest_ignores_layout_comments_order_and_review():
    a = 'id: x  # c\nname: "y"\nstandard: {dfH: "-1 kJ/mol"}\nreview: {status: draft}\n'
    b = "# header\nstandard:\n  dfH: -1 kJ/mol\nname: y\nid: x\n"
    da, db = (content_digest(parse_yaml_text(t, "t")[0]) for t in (a, b))
    assert da == db and len(da) == 16 and int(da, 16) >= 0
    c = b.replace("-1 kJ/mol", "-2 kJ/mol")
    assert content_digest(parse_yaml_text(c, "t")[0]) != da
    assert canonical_json({"b": 1, "a": [1.5, "é"], "review": {}}) == '{"a":[1.5,"é"],"b":1}'


def test_loader_stores_the_digest(mini: Path):
    hb = _load(mini)
    text = (mini / "species" / "water-gas.yaml").read_text()
    assert hb.species["water-gas"].content_digest == content_digest(parse_yaml_text(text,
                                                                                    "t")[0])
    assert hb.reactions["burning"].content_digest is not None


# --- several sources per value -------------------------------------------------------------


def test_spread_beyond_combined_uncertainty_is_disputed(mini: Path):
    # -241.826 ± 0.040 kJ/mol is the CODATA 1989 value (from memory); the second value and
    # its reference are invented for the test: 0.5 kJ/mol apart, u_c = sqrt(0.04² + 0.1²).
    _set_dfH(mini, "water-gas", "  dfH:\n"
             "    - {value: -241.826, unc: 0.040, unit: kJ/mol, preferred: true}\n"
             "    - {value: -241.326, unc: 0.100, unit: kJ/mol, ref: old-atm}")
    prov = provenance(_load(mini), TODAY)
    s = prov.spreads_of("water-gas")["dfH"]
    assert s.spread == pytest.approx(0.5)
    assert s.u_combined == pytest.approx((0.04 ** 2 + 0.1 ** 2) ** 0.5)
    assert s.disputed and s.preferred_index == 0
    assert s.rule == "marked preferred: true in the source"
    f = [f for f in prov.findings if f.code == "disputed-value"]
    assert len(f) == 1 and f[0].item == "water-gas" and f[0].severity.value == "warning"


def test_spread_within_uncertainty_and_the_unmarked_rule(mini: Path):
    # Invented second value 0.05 kJ/mol from the first, within u_c = 0.108 kJ/mol; no mark,
    # so the smaller stated uncertainty wins (the documented rule).
    _set_dfH(mini, "water-gas", "  dfH:\n"
             "    - {value: -241.776, unc: 0.100, unit: kJ/mol, ref: old-atm}\n"
             "    - {value: -241.826, unc: 0.040, unit: kJ/mol}\n"
             "    - {value: -241.8, unit: kJ/mol}")
    prov = provenance(_load(mini), TODAY)
    s = prov.spreads_of("water-gas")["dfH"]
    assert not s.disputed and s.preferred_index == 1
    assert s.rule == "smallest stated uncertainty (first in file on a tie)"
    assert s.spread == pytest.approx(0.05)  # the value without uncertainty is in the spread
    assert not [f for f in prov.findings if f.code == "disputed-value"]


def test_demo_has_a_disputed_value():
    prov = provenance(_load(REPO / "sources"), TODAY)
    assert any(s.item == "calcium-oxide" and s.disputed for s in prov.spreads)


# --- review coverage ------------------------------------------------------------------------


def _review(root: Path, sid: str, status: str, date: str) -> None:
    f = root / "species" / f"{sid}.yaml"
    text, _rec = review_text(f.read_text(), str(f), status, "J. Doe", date)
    f.write_text(text)


def test_review_covers_until_the_content_changes(mini: Path):
    _review(mini, "water-gas", "approved", "2026-10-02")
    c = provenance(_load(mini), TODAY).species_reviews["water-gas"]
    assert c.state == "covered" and c.covered and not c.stale
    assert c.label == "approved 2026-10-02 by J. Doe; covers the current content"
    f = mini / "species" / "water-gas.yaml"
    f.write_text(f.read_text().replace("-241.826 ± 0.040", "-241.8 ± 0.1"))
    prov = provenance(_load(mini), TODAY)
    c = prov.species_reviews["water-gas"]
    assert c.state == "changed"
    assert c.label == "approved 2026-10-02 by J. Doe; changed since"
    codes = [(x.code, x.item) for x in prov.findings]
    assert ("review-changed-since", "water-gas") in codes


def test_stale_review_is_flagged_relative_to_today(mini: Path):
    # The mini handbook sets no interval: the model's default of 365 days applies.
    _review(mini, "water-gas", "checked", "2025-11-30")
    prov = provenance(_load(mini), TODAY)  # 366 days later
    c = prov.species_reviews["water-gas"]
    assert c.stale and c.age_days == 366 and c.state == "covered"
    assert "older than the 365-day review interval" in c.label
    assert [x.code for x in prov.findings if x.item == "water-gas"] == ["review-stale"]
    assert not provenance(_load(mini), dt.date(2026, 11, 30)).species_reviews[
        "water-gas"].stale  # 365 days: not older than the interval


def test_review_without_digest(mini: Path):
    f = mini / "species" / "water-gas.yaml"
    f.write_text(f.read_text() + 'review: {status: checked, by: A. B, date: "2026-11-01"}\n')
    c = provenance(_load(mini), TODAY).species_reviews["water-gas"]
    assert c.state == "no-digest" and c.reviewed and not c.covered
    assert c.label.endswith("no content digest recorded")


def test_today_from_source_date_epoch(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")  # 2026-01-01T00:00:00Z
    assert today_from_environment() == dt.date(2026, 1, 1)
    monkeypatch.delenv("SOURCE_DATE_EPOCH")
    assert today_from_environment() == dt.datetime.now(dt.timezone.utc).date()


def test_demo_has_a_stale_and_a_changed_approval():
    prov = provenance(_load(REPO / "sources"), dt.date(2026, 1, 1))
    reviews = list(prov.species_reviews.values()) + list(prov.reaction_reviews.values())
    changed = [c for c in reviews if c.state == "changed" and c.status == "approved"]
    stale = [c for c in reviews if c.stale and c.status == "approved"]
    assert changed and stale
    hb = _load(REPO / "sources")
    for c in changed + stale:
        sp = hb.species.get(c.item) or hb.reactions[c.item]
        assert "demo data" in sp.review.note.lower()


# --- completeness and the audit lists ---------------------------------------------------------


def test_completeness_of_the_mini_handbook(mini: Path):
    _review(mini, "water-gas", "approved", "2026-10-02")
    prov = provenance(_load(mini), TODAY)
    c = prov.completeness
    # Four species with dfH and S each (tests/fixtures/mini); the dfH of H2 and O2 carry no
    # uncertainty; only water-gas is reviewed (2 values), and still covered.
    assert (c.values, c.with_ref, c.with_unc, c.reviewed, c.covered) == (8, 8, 6, 2, 2)
    assert (c.items, c.items_reviewed, c.items_covered) == (6, 1, 1)
    assert c.share_with_unc == pytest.approx(0.75)
    assert c.to_json()["share_covered"] == pytest.approx(0.25)
    assert [e.item for e in prov.uncited_references] == ["old-atm"]
    assert prov.uncited_references[0].location is not None
    assert any(f.code == "uncited-reference" for f in prov.findings)
    assert {e.item for e in prov.unreviewed} == {"hydrogen", "oxygen", "water-liquid",
                                                  "burning", "vaporisation"}


def test_from_memory_values_are_listed(mini: Path):
    f = mini / "species" / "oxygen.yaml"
    f.write_text(f.read_text() + 'review: {status: draft, note: "entered from memory"}\n')
    prov = provenance(_load(mini), TODAY)
    assert {(e.item, e.quantity) for e in prov.from_memory} == {("oxygen", "dfH"),
                                                                 ("oxygen", "S")}
    assert prov.completeness.from_memory == 2


def test_compute_handbook_carries_provenance(mini: Path):
    computed = compute_handbook(_load(mini), today=TODAY)
    assert computed.provenance is not None and computed.provenance.today == "2026-12-01"
    assert computed.completeness.values == 8
    assert any(f.code == "uncited-reference" for f in computed.findings)
