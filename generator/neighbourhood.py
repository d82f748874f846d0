"""What one item's numbers and sheet can see: a handbook cut down to an item's neighbourhood.

An incremental build is only sound if a cached result is a function of exactly the inputs
its key was made from.  Rather than listing those inputs beside the code that reads them
(and trusting the two lists to stay in step), the item is *computed and rendered from* a cut
of the handbook that holds only its neighbourhood, and the cache key is the digest of that
same cut (``digest_of``).  Whatever the sheet shows must come from the cut; a reader that
reaches outside it fails loudly (a missing key), and a test renders every bundled item from
its cut and from the whole handbook and requires the same bytes.

Neighbourhood of a reaction: the reaction, the reactions of its ``combine:`` steps, and every
species they or the reaction's feeds name.  Of a species: the species, the gaseous atoms it
is taken apart into, the reactions that use it and their species (a sheet links them with
their equations).  Settings and the element reference states are always in; review coverage,
spreads, network values and design numbers only for the item itself.  Pure: no I/O.
"""

from __future__ import annotations

import hashlib
import io
import pickle
from collections.abc import Iterable, Mapping
from dataclasses import fields, is_dataclass, replace
from typing import TYPE_CHECKING

from generator.model import Handbook, Reaction

if TYPE_CHECKING:
    from generator.compute import Computed

DIGEST_VERSION = b"thermofolio neighbourhood 1"


def reaction_species(rx: Reaction) -> list[str]:
    """Species ids of a reaction's equation and of its feeds, in a stable order."""
    out = dict.fromkeys(t.species for t in (*rx.reactants, *rx.products))
    if rx.conditions is not None:
        for feed in rx.conditions.feeds:
            out.update(dict.fromkeys(feed.species))
    return list(out)


def reaction_closure(hb: Handbook, rid: str) -> tuple[list[str], list[str]]:
    """(species ids, reaction ids) a reaction's numbers are computed from."""
    rx = hb.reactions[rid]
    reactions = [rid] + [s.reaction for s in rx.combine if s.reaction != rid]
    species: dict[str, None] = {}
    for r in reactions:
        species.update(dict.fromkeys(reaction_species(hb.reactions[r])))
    return [s for s in species if s in hb.species], list(dict.fromkeys(reactions))


def cut_handbook(hb: Handbook, species: Iterable[str], reactions: Iterable[str]) -> Handbook:
    """``hb`` holding only the given species and reactions (references are kept: sheets
    cite them)."""
    return replace(hb, species={s: hb.species[s] for s in species},
                   reactions={r: hb.reactions[r] for r in reactions})


def reaction_handbook(hb: Handbook, rid: str) -> Handbook:
    """The cut a reaction's engine and design numbers are computed from; no references."""
    species, reactions = reaction_closure(hb, rid)
    return replace(cut_handbook(hb, species, reactions), references={})


def reaction_view(computed: Computed, rid: str) -> Computed:
    """``computed`` cut down to what a reaction's design numbers are computed from."""
    species, reactions = reaction_closure(computed.handbook, rid)
    hb = replace(cut_handbook(computed.handbook, species, reactions), references={})
    return replace(computed, handbook=hb,
                   species={s: computed.species[s] for s in species},
                   reactions={r: computed.reactions[r] for r in reactions},
                   findings=(), provenance=None, network=None, design=None)


_GROUPED: dict[int, tuple[tuple, dict[str, list]]] = {}


def _by_item(entries: tuple) -> dict[str, list]:
    """Entries (observations, spreads) grouped by their ``item``, in order; built once per
    tuple (remembered by identity while the tuple lives)."""
    hit = _GROUPED.get(id(entries))
    if hit is not None and hit[0] is entries:
        return hit[1]
    groups: dict[str, list] = {}
    for e in entries:
        groups.setdefault(e.item, []).append(e)
    if len(_GROUPED) > 8:
        _GROUPED.clear()
    _GROUPED[id(entries)] = (entries, groups)
    return groups


def item_closure(computed: Computed, key: str) -> tuple[list[str], list[str]]:
    """(species ids, reaction ids) of an item's sheet (``species:<id>`` / ``reaction:<id>``)."""
    kind, _, item = key.partition(":")
    hb = computed.handbook
    if kind == "reaction":
        return reaction_closure(hb, item)
    sr = computed.species[item]
    species = dict.fromkeys([item, *(aid for _el, aid, _n in sr.atoms)])
    for rid in sr.reactions:
        species.update(dict.fromkeys(reaction_species(hb.reactions[rid])))
    return [s for s in species if s in hb.species], list(sr.reactions)


def item_view(computed: Computed, key: str) -> Computed:
    """``computed`` cut down to what the sheet of ``key`` may show."""
    kind, _, item = key.partition(":")
    species, reactions = item_closure(computed, key)
    hb = cut_handbook(computed.handbook, species, reactions)
    prov = computed.provenance
    if prov is not None:
        table = "species_reviews" if kind == "species" else "reaction_reviews"
        own = getattr(prov, table)
        prov = replace(prov, spreads=tuple(_by_item(prov.spreads).get(item, ())),
                       species_reviews={}, reaction_reviews={}, completeness=None,
                       from_memory=(), unreviewed=(), uncited_references=(), findings=())
        prov = replace(prov, **{table: {item: own[item]} if item in own else {}})
    net = computed.network
    if net is not None:  # the whole-network figures (chi², skipped lines) are the audit's
        net = replace(net, observations=tuple(_by_item(net.observations).get(item, ())),
                      reconciled={item: net.reconciled[item]} if item in net.reconciled else {},
                      fixed={item: net.fixed[item]} if item in net.fixed else {},
                      skipped=(), skipped_no_unc=0, skipped_other_T=0, chi2=0.0, dof=0)
    design = computed.design
    if design is not None:
        own_design = design.reactions.get(item) if kind == "reaction" else None
        design = replace(design, reactions={} if own_design is None else {item: own_design},
                         families={}, ladders={})
    return replace(computed, handbook=hb,
                   species={s: computed.species[s] for s in species},
                   reactions={r: computed.reactions[r] for r in reactions},
                   findings=(), provenance=prov, network=net, design=design)


# --- digests -------------------------------------------------------------------------------


# Result types digested field by field, so the model objects they hold (digested already as
# part of the handbook) and their curves are each pickled once per build.
FIELDWISE = frozenset({"SpeciesResult", "ReactionResult", "DesignResult"})
_SHARED: list[tuple[object, Digester]] = []


def digester_for(anchor: object) -> Digester:
    """The Digester of one build, found by the build's handbook object: the compute stage
    and the render stage (and the workers forked from it) share its remembered digests.
    Only the two latest builds' digesters are kept (the preview server builds again and
    again in one process)."""
    for a, d in _SHARED:
        if a is anchor:
            return d
    d = Digester()
    _SHARED.insert(0, (anchor, d))
    del _SHARED[2:]
    return d


def canonical_pickle(obj: object) -> bytes:
    """``obj`` pickled without the memo ("fast" mode): an object reached twice is written out
    twice, so the bytes depend on the values alone and not on which parts happen to be
    shared (a fresh result and the same result read back from the cache share differently).
    The model and result objects are acyclic, as fast mode requires."""
    buf = io.BytesIO()
    p = pickle.Pickler(buf, protocol=5)
    p.fast = True
    p.dump(obj)
    return buf.getvalue()


class Digester:
    """sha256 digests of model and result objects, each pickled on its own.

    An object's digest depends only on its own content: a view is digested part by part
    (each species, reaction and result separately), so objects shared between parts, or
    shared differently after a trip through a worker process or the cache, give the same
    digest.  Digests of objects seen before are remembered by identity for this digester's
    lifetime (the objects are frozen and kept alive by the handbook)."""

    def __init__(self) -> None:
        self._seen: dict[int, tuple[object, bytes]] = {}

    def of(self, obj: object) -> bytes:
        hit = self._seen.get(id(obj))
        if hit is not None and hit[0] is obj:
            return hit[1]
        if type(obj).__name__ in FIELDWISE and is_dataclass(obj):
            h = hashlib.sha256(type(obj).__qualname__.encode())
            for f in fields(obj):
                h.update(f"\0{f.name}\0".encode())
                h.update(self.of(getattr(obj, f.name)))
            d = h.digest()
        else:
            d = hashlib.sha256(canonical_pickle(obj)).digest()
        self._seen[id(obj)] = (obj, d)
        return d

    def know(self, digest: str, obj: object, *parts: str) -> None:
        """Take as the digest of each named attribute of ``obj`` (or of ``obj`` itself with
        no names) one derived from ``digest``: the digest of everything it was computed
        from.  The work is a pure function of those inputs, so this stands for the content
        without pickling large curves again in every process.  Only objects made for this
        one result may be named (never one shared with other results)."""
        for name in parts or ("",):
            part = getattr(obj, name) if name else obj
            if part is None or isinstance(part, str | int | float | tuple):
                continue  # shared singletons and small values keep their content digest
            self._seen[id(part)] = (part, hashlib.sha256(f"{digest}\0{name}".encode()).digest())

    def of_mapping(self, h, name: str, mapping: Mapping) -> None:
        h.update(f"\0{name}\0{len(mapping)}\0".encode())
        for k in sorted(mapping):
            h.update(f"{k}\0".encode())
            h.update(self.of(mapping[k]))

    def handbook(self, h, hb: Handbook) -> None:
        h.update(f"\0root\0{hb.root}\0".encode())
        h.update(self.of(hb.settings))
        self.of_mapping(h, "references", hb.references)
        self.of_mapping(h, "species", hb.species)
        self.of_mapping(h, "reactions", hb.reactions)

    def parts(self, *parts: object) -> str:
        """Hex digest of ``parts``: mappings entry by entry, anything else as one object."""
        h = hashlib.sha256(DIGEST_VERSION + b" parts")
        for i, part in enumerate(parts):
            if isinstance(part, Mapping):
                self.of_mapping(h, str(i), part)
            else:
                h.update(f"\0{i}\0".encode())
                h.update(self.of(part))
        return h.hexdigest()

    def cut(self, hb: Handbook, *extra: object) -> str:
        """Hex digest of a cut handbook (reaction_handbook) and of ``extra``."""
        h = hashlib.sha256(DIGEST_VERSION + b" handbook")
        self.handbook(h, hb)
        h.update(hashlib.sha256(canonical_pickle(extra)).digest())
        return h.hexdigest()

    def view(self, view: Computed, *extra: object) -> str:
        """Hex digest of a cut (item_view) and of ``extra`` (findings, build facts, ...)."""
        h = hashlib.sha256(DIGEST_VERSION)
        self.handbook(h, view.handbook)
        self.of_mapping(h, "element_refs", view.element_refs)
        self.of_mapping(h, "species_results", view.species)
        self.of_mapping(h, "reaction_results", view.reactions)
        h.update(canonical_pickle(view.findings))
        for name in ("provenance", "network"):
            h.update(f"\0{name}\0".encode())
            h.update(hashlib.sha256(canonical_pickle(getattr(view, name))).digest())
        if view.design is not None:
            self.of_mapping(h, "design", view.design.reactions)
        h.update(b"\0extra\0")
        h.update(hashlib.sha256(canonical_pickle(extra)).digest())
        return h.hexdigest()

