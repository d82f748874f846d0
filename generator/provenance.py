"""Provenance of the handbook's values: several sources per value, review coverage, audit.

Pure: works on the loaded model and a date given by the caller (``today_from_environment``
is the one helper that reads the environment, for the command line and the build).

* Spread of a quantity cited from several references: the values, the one used (marked
  ``preferred: true``, else ``Quantity.preference_rule``), max − min, and a
  ``disputed-value`` finding when two values differ by more than their combined standard
  uncertainty u_c = sqrt(u_a² + u_b²) (GUM, JCGM 100:2008 §5.1; coverage factor
  ``DISPUTE_K``).  Values without an uncertainty are in the spread but not in the test.
* Review coverage: a review block may carry ``digest``, the content digest of the item when
  it was reviewed (generator.digest).  A different current digest means the review no
  longer covers the content (``review-changed-since``); a review older than the handbook's
  ``review_interval_days`` is ``review-stale``.
* Completeness figures, values entered from memory, unreviewed items, uncited references.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math
import os
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from generator.diagnostics import Finding, Location, Severity, note, warning
from generator.model import Handbook, Quantity, Reaction, Review, Species, Value

DISPUTE_K = 1.0  # the rule: a spread beyond the combined standard uncertainty
REVIEWED = ("checked", "approved")
QUANTITY_LABELS = {"dfH": "ΔfH°", "dfG": "ΔfG°", "S": "S°", "Cp": "Cp°",
                   "drH": "ΔrH°", "drG": "ΔrG°", "drS": "ΔrS°", "K": "K"}


def today_from_environment() -> dt.date:
    """The build's "today": the UTC date of SOURCE_DATE_EPOCH when set, else today (UTC)."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if epoch:
        try:
            return dt.datetime.fromtimestamp(int(epoch), tz=dt.timezone.utc).date()
        except (ValueError, OverflowError, OSError):
            pass
    return dt.datetime.now(tz=dt.timezone.utc).date()


# --- several sources per value -------------------------------------------------------------


@dataclass(frozen=True)
class Spread:
    """The values cited for one quantity of one item, and how far apart they are."""

    kind: str  # "species" or "reaction"
    item: str
    quantity: str  # "dfH", ... or, for a measured reaction value, "drH@298.15K"
    unit: str
    values: tuple[Value, ...]
    preferred_index: int  # the value used
    rule: str  # how it was chosen, in words, for the sheet
    spread: float  # max − min, in ``unit``
    u_combined: float | None  # u_c of the most discrepant pair with uncertainties
    worst_pair: tuple[int, int] | None  # indices of that pair
    worst_gap: float | None  # their difference, in ``unit``
    disputed: bool
    location: Location | None = None

    @property
    def ratio(self) -> float | None:
        """|gap| / u_c of the most discrepant pair."""
        if self.worst_gap is None or not self.u_combined:
            return None
        return abs(self.worst_gap) / self.u_combined


def _spread(kind: str, item: str, quantity: str, values: tuple[Value, ...], preferred: Value,
            rule: str, location: Location | None) -> Spread:
    xs = [v.value for v in values]
    worst: tuple[float, int, int, float, float] | None = None  # (ratio, i, j, gap, u_c)
    for i, j in itertools.combinations(range(len(values)), 2):
        a, b = values[i], values[j]
        if a.unc is None or b.unc is None:
            continue
        u_c = math.hypot(a.unc, b.unc)
        gap = b.value - a.value
        ratio = abs(gap) / u_c if u_c > 0 else (math.inf if gap else 0.0)
        if worst is None or ratio > worst[0]:
            worst = (ratio, i, j, gap, u_c)
    index = next(i for i, v in enumerate(values) if v is preferred)
    return Spread(
        kind=kind, item=item, quantity=quantity, unit=values[0].unit, values=values,
        preferred_index=index, rule=rule, spread=max(xs) - min(xs),
        u_combined=worst[4] if worst else None,
        worst_pair=(worst[1], worst[2]) if worst else None,
        worst_gap=worst[3] if worst else None,
        disputed=bool(worst and worst[0] > DISPUTE_K),
        location=location,
    )


def species_spreads(sp: Species) -> list[Spread]:
    out = []
    for name, q in sp.standard.items():
        if len(q.values) > 1:
            out.append(_spread("species", sp.id, name, q.values, q.preferred, q.preference_rule,
                               q.location))
    return out


def reaction_spreads(rx: Reaction) -> list[Spread]:
    """Measured values of the same quantity at the same temperature, grouped."""
    groups: dict[tuple[str, float], list] = {}
    for m in rx.measured:
        groups.setdefault((m.quantity, m.T), []).append(m)
    out = []
    for (qname, T), ms in groups.items():
        if len(ms) < 2:
            continue
        q = Quantity(qname, tuple(m.value for m in ms), ms[0].location)
        out.append(_spread("reaction", rx.id, f"{qname}@{T:g}K", q.values, q.preferred,
                           q.preference_rule, ms[0].location))
    return out


def quantity_spreads(handbook: Handbook) -> list[Spread]:
    """Every quantity cited from more than one value, species first."""
    out: list[Spread] = []
    for sp in handbook.species.values():
        out += species_spreads(sp)
    for rx in handbook.reactions.values():
        out += reaction_spreads(rx)
    return out


def _fmt(x: float) -> str:
    return f"{x:.3g}" if abs(x) < 0.1 else f"{x:.2f}"


def spread_findings(spreads: Iterable[Spread]) -> list[Finding]:
    out = []
    for s in spreads:
        if not s.disputed or s.worst_pair is None:
            continue
        i, j = s.worst_pair
        a, b = s.values[i], s.values[j]
        label = QUANTITY_LABELS.get(s.quantity.split("@")[0], s.quantity)
        out.append(warning(
            "disputed-value", f"{label} of {s.item} is disputed: {a.ref or 'value ' + str(i + 1)}"
            f" gives {a.value:g} and {b.ref or 'value ' + str(j + 1)} gives {b.value:g} {s.unit},"
            f" {_fmt(abs(s.worst_gap or 0.0))} apart, beyond their combined standard uncertainty"
            f" {_fmt(s.u_combined or 0.0)} {s.unit}", b.location or s.location,
            hint=f"the handbook uses {s.values[s.preferred_index].ref or 'the first value'} "
            f"({s.rule}); resolve the dispute or explain it in the notes", item=s.item,
            quantity=s.quantity, data={"spread": s.spread, "u_combined": s.u_combined,
                                       "ratio": s.ratio}))
    return out


# --- review coverage -----------------------------------------------------------------------


@dataclass(frozen=True)
class ReviewCoverage:
    """Whether an item's review still covers its content, and how old it is."""

    kind: str  # "species" or "reaction"
    item: str
    path: str
    status: str
    by: str | None
    date: str | None
    recorded_digest: str | None
    current_digest: str | None
    state: str  # "unreviewed", "covered", "changed" or "no-digest"
    age_days: int | None
    stale: bool
    interval_days: int
    location: Location | None = None

    @property
    def reviewed(self) -> bool:
        return self.status in REVIEWED

    @property
    def covered(self) -> bool:
        return self.state == "covered"

    @property
    def label(self) -> str:
        """E.g. "approved 2026-10-02 by J. Doe; changed since"."""
        if not self.reviewed:
            return self.status
        head = self.status + (f" {self.date}" if self.date else "") + (
            f" by {self.by}" if self.by else "")
        tail = {"covered": "covers the current content", "changed": "changed since",
                "no-digest": "no content digest recorded"}[self.state]
        text = f"{head}; {tail}"
        if self.stale:
            text += f"; older than the {self.interval_days}-day review interval"
        return text


def coverage(kind: str, item: str, path: str, review: Review, current_digest: str | None,
             today: dt.date, interval_days: int) -> ReviewCoverage:
    if review.status not in REVIEWED:
        state = "unreviewed"
    elif not review.digest:
        state = "no-digest"
    elif review.digest == current_digest:
        state = "covered"
    else:
        state = "changed"
    age = None
    if review.date:
        try:
            age = (today - dt.date.fromisoformat(review.date)).days
        except ValueError:
            age = None
    stale = review.status in REVIEWED and age is not None and age > interval_days
    return ReviewCoverage(kind, item, path, review.status, review.by, review.date,
                          review.digest, current_digest, state, age, stale, interval_days,
                          review.location)


def review_coverage(handbook: Handbook, today: dt.date
                    ) -> tuple[dict[str, ReviewCoverage], dict[str, ReviewCoverage]]:
    """(species id → coverage, reaction id → coverage)."""
    n = handbook.settings.review_interval_days
    sp = {s.id: coverage("species", s.id, s.path, s.review, s.content_digest, today, n)
          for s in handbook.species.values()}
    rx = {r.id: coverage("reaction", r.id, r.path, r.review, r.content_digest, today, n)
          for r in handbook.reactions.values()}
    return sp, rx


def review_findings(reviews: Iterable[ReviewCoverage]) -> list[Finding]:
    out = []
    for c in reviews:
        again = (f"review it again: thermofolio review {c.item} --status {c.status} "
                 "--by NAME")
        if c.state == "changed":
            out.append(warning(
                "review-changed-since", f"{c.item}: {c.label} — the review no longer covers "
                f"its content (digest {c.recorded_digest} reviewed, {c.current_digest} now)",
                c.location, hint=again, item=c.item, quantity="review"))
        if c.stale:
            out.append(warning(
                "review-stale", f"{c.item}: the review of {c.date} is {c.age_days} days old, "
                f"beyond the handbook's review interval of {c.interval_days} days", c.location,
                hint=again, item=c.item, quantity="review"))
    return out


# --- audit ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class AuditEntry:
    """One thing the audit page lists, with the place to fix it."""

    kind: str  # "species", "reaction" or "reference"
    item: str
    quantity: str | None
    text: str
    path: str
    location: Location | None


@dataclass(frozen=True)
class Completeness:
    """Counts over every cited value (standard values and measured reaction values)."""

    values: int
    with_ref: int
    with_unc: int
    reviewed: int  # values of items with status checked or approved
    covered: int  # values of items whose review digest matches their content
    from_memory: int
    items: int
    items_reviewed: int
    items_covered: int
    items_changed: int
    items_no_digest: int
    items_stale: int

    @staticmethod
    def share(part: int, whole: int) -> float | None:
        return part / whole if whole else None

    @property
    def share_with_ref(self) -> float | None:
        return self.share(self.with_ref, self.values)

    @property
    def share_with_unc(self) -> float | None:
        return self.share(self.with_unc, self.values)

    @property
    def share_reviewed(self) -> float | None:
        return self.share(self.reviewed, self.values)

    @property
    def share_covered(self) -> float | None:
        return self.share(self.covered, self.values)

    def to_json(self) -> dict:
        out = {k: getattr(self, k) for k in self.__dataclass_fields__}
        out.update(share_with_ref=self.share_with_ref, share_with_unc=self.share_with_unc,
                   share_reviewed=self.share_reviewed, share_covered=self.share_covered)
        return out


def _item_values(handbook: Handbook):
    """(kind, item, quantity, value, path) for every cited value."""
    for sp in handbook.species.values():
        for name, q in sp.standard.items():
            for v in q.values:
                yield "species", sp.id, name, v, sp.path
    for rx in handbook.reactions.values():
        for m in rx.measured:
            yield "reaction", rx.id, f"{m.quantity}@{m.T:g}K", m.value, rx.path


def completeness(handbook: Handbook, species_reviews: Mapping[str, ReviewCoverage],
                 reaction_reviews: Mapping[str, ReviewCoverage]) -> Completeness:
    cov = {"species": species_reviews, "reaction": reaction_reviews}
    n = ref = unc = rev = covd = mem = 0
    for kind, item, _q, v, _p in _item_values(handbook):
        c = cov[kind][item]
        n += 1
        ref += v.ref is not None
        unc += v.unc is not None
        rev += c.reviewed
        covd += c.covered
        mem += v.from_memory
    all_cov = list(species_reviews.values()) + list(reaction_reviews.values())
    return Completeness(
        values=n, with_ref=ref, with_unc=unc, reviewed=rev, covered=covd, from_memory=mem,
        items=len(all_cov), items_reviewed=sum(c.reviewed for c in all_cov),
        items_covered=sum(c.covered for c in all_cov),
        items_changed=sum(c.state == "changed" for c in all_cov),
        items_no_digest=sum(c.state == "no-digest" for c in all_cov),
        items_stale=sum(c.stale for c in all_cov),
    )


def from_memory_values(handbook: Handbook) -> list[AuditEntry]:
    return [AuditEntry(kind, item, q, f"{QUANTITY_LABELS.get(q.split('@')[0], q)} of {item} "
                       f"({v.written or v.value}) entered from memory", path, v.location)
            for kind, item, q, v, path in _item_values(handbook) if v.from_memory]


def unreviewed_items(reviews: Iterable[ReviewCoverage]) -> list[AuditEntry]:
    return [AuditEntry(c.kind, c.item, None, f"{c.item} is {c.status}: not yet checked",
                       c.path, c.location) for c in reviews if not c.reviewed]


def cited_reference_keys(handbook: Handbook) -> set[str]:
    keys = {v.ref for *_x, v, _p in _item_values(handbook) if v.ref}
    keys |= {p.ref for sp in handbook.species.values() for p in sp.cp if p.ref}
    keys |= {sp.ref for sp in handbook.species.values() if sp.ref}
    keys |= {rx.ref for rx in handbook.reactions.values() if rx.ref}
    return keys


def uncited_references(handbook: Handbook) -> list[AuditEntry]:
    """References no value, Cp piece or file default cites."""
    cited = cited_reference_keys(handbook)
    return [AuditEntry("reference", key, None, f"reference '{key}' is cited by nothing",
                       ref.location.path if ref.location else "", ref.location)
            for key, ref in handbook.references.items() if key not in cited]


def findings_by_severity(findings: Iterable[Finding]) -> dict[str, list[Finding]]:
    """Open findings grouped by severity, errors first."""
    out: dict[str, list[Finding]] = {s.value: [] for s in Severity}
    for f in findings:
        out[f.severity.value].append(f)
    return out


@dataclass(frozen=True)
class Provenance:
    """Everything this module derives, for the sheets and the audit page."""

    today: str  # ISO date the review ages are counted to
    spreads: tuple[Spread, ...]
    species_reviews: Mapping[str, ReviewCoverage]
    reaction_reviews: Mapping[str, ReviewCoverage]
    completeness: Completeness
    from_memory: tuple[AuditEntry, ...]
    unreviewed: tuple[AuditEntry, ...]
    uncited_references: tuple[AuditEntry, ...]
    findings: tuple[Finding, ...]

    def spreads_of(self, item: str) -> dict[str, Spread]:
        """Quantity → spread for one species or reaction id."""
        return {s.quantity: s for s in self.spreads if s.item == item}


def provenance(handbook: Handbook, today: dt.date) -> Provenance:
    spreads = quantity_spreads(handbook)
    sp_rev, rx_rev = review_coverage(handbook, today)
    all_rev = list(sp_rev.values()) + list(rx_rev.values())
    uncited = uncited_references(handbook)
    findings = spread_findings(spreads) + review_findings(all_rev)
    findings += [note("uncited-reference", e.text, e.location, item=e.item,
                      hint="cite it or remove it") for e in uncited]
    return Provenance(
        today=today.isoformat(), spreads=tuple(spreads), species_reviews=sp_rev,
        reaction_reviews=rx_rev, completeness=completeness(handbook, sp_rev, rx_rev),
        from_memory=tuple(from_memory_values(handbook)), unreviewed=tuple(
            unreviewed_items(all_rev)), uncited_references=tuple(uncited),
        findings=tuple(findings))


def provenance_findings(computed, today: dt.date | None = None) -> list[Finding]:
    """The provenance findings of a computed handbook (``today`` from the environment when
    not given)."""
    return list(provenance(computed.handbook, today or today_from_environment()).findings)
