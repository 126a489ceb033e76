"""Site pKa = parent pKa + substituent terms, each term kept for the explanation."""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache
from typing import TYPE_CHECKING

from rdkit import Chem

from annotate.pka.aromatic import hammett_contributions
from annotate.pka.bounds import Bound
from annotate.pka.contributions import Contribution, net_of_parent
from annotate.pka.inductive import taft_contributions
from annotate.pka.ring_systems import find_parent, ring_parent_contributions
from annotate.pka.substituents import SubstituentIndex, SubstituentTable
from annotate.results import Site, Term
from annotate.sites.perceive import SiteMatch
from annotate.sites.rules import GroupRule

if TYPE_CHECKING:
    from annotate.ruleset import RuleSet

#: distinct (rule, raw contributions) combinations kept; a few thousand cover a library
_EXPLAINED_CACHE = 4096
#: uncertainty added when a ring N's ring system is not in ring_systems.tsv
UNLISTED_RING_SD = 1.0


def substituent_contributions(
    mol: Chem.Mol,
    rule: GroupRule,
    match: tuple[int, ...],
    table: SubstituentTable,
    index: SubstituentIndex | None = None,
) -> list[Contribution]:
    """Raw contributions of everything outside the group, by the rule's model, then
    those of the rule's second aromatic ring (anchor mapped :3), if it has one. For a
    ``ring`` rule: the general row's Hammett terms, used when the site's ring system
    is not in the table."""
    if rule.model == "fixed":
        return []
    index = index or SubstituentIndex(mol, table)
    group = frozenset(match)
    anchor = match[rule.anchor_index]
    if rule.model == "taft":
        out = taft_contributions(mol, anchor, group, rule.rho, index)
    else:
        out = hammett_contributions(mol, anchor, group, rule, index, table)
    if rule.anchor2_index is None:
        return out
    ring = hammett_contributions(mol, match[rule.anchor2_index], group, _second_ring_rule(rule), index, table)
    prefix = f"second ring (rho {rule.rho2:.2f}): "
    return out + [Contribution(prefix + c.label, c.value, c.sd) for c in ring]


@lru_cache(maxsize=64)
def _second_ring_rule(rule: GroupRule) -> GroupRule:
    """The rule as seen from its second ring: the same sigma choice and ortho
    treatment, with rho2. A sulfonamide N, for instance, feels both the ring on
    the N and the ring on the S, each with its own transmission."""
    return replace(rule, rho=rule.rho2, anchor2_index=None)


def estimate_site(mol: Chem.Mol, site: SiteMatch, *, rules: RuleSet, index: SubstituentIndex) -> Site | None:
    """A Site whose pKa is exactly the sum of its listed terms; None for a ring N
    whose ring system's row says it takes no proton in water."""
    rule = site.rule
    name, parent, pka, sd = rule.name, rule.parent, rule.pka, rule.sd
    parent_terms = rules.parent_terms[rule.name]
    if rule.model == "ring":
        match = find_parent(index.graph, site.atom, rules.ring_systems)
        if match is not None and match.parent.pka is None:
            return None
        if match is not None:
            raw = ring_parent_contributions(
                match, site.atom, frozenset(site.match), rule, index, rules.substituents, rules.ring_systems
            )
            row = match.parent
            name, parent, pka, sd, parent_terms = f"{rule.name}: {row.name}", row.smiles, row.pka, row.sd, ()
        else:
            raw = substituent_contributions(mol, rule, site.match, rules.substituents, index)
            raw.append(Contribution("ring system not in ring_systems.tsv: general row", 0.0, UNLISTED_RING_SD))
    else:
        raw = substituent_contributions(mol, rule, site.match, rules.substituents, index)
    bound = rules.bounds.get(rule.category)
    terms, value, sd = _explained(name, parent, pka, sd, tuple(raw), parent_terms, bound)
    return Site(
        atom=site.atom,
        kind=rule.kind,
        group=rule.name,
        category=rule.category,
        pka=value,
        pka_sd=sd,
        terms=terms,
    )


@lru_cache(maxsize=_EXPLAINED_CACHE)
def _explained(
    name: str,
    parent: str,
    parent_pka: float,
    parent_sd: float,
    raw: tuple[Contribution, ...],
    parent_terms: tuple[Contribution, ...],
    bound: Bound | None = None,
) -> tuple[tuple[Term, ...], float, float]:
    """Terms, rounded pKa and sd of a site of rule ``name`` with these raw
    contributions. A library repeats the same few combinations of rule and
    substituents (nine sites in ten in the benchmark set), so each combination
    is worked out once. A sum outside the category's bound is brought to the
    bound by a term of its own, so the pKa stays the sum of the terms."""
    terms = [Term(f"{name} (parent {parent})", parent_pka)]
    values = [parent_pka]
    variances = []
    for label, value, sd in net_of_parent(raw, parent_terms):
        value = round(value, 3)
        terms.append(Term(label, value))
        values.append(value)
        variances.append(sd**2)
    shown = {t.label for t in terms}
    parent_labels = {c.label for c in parent_terms}
    for c in raw:  # notes such as an unlisted substituent shift nothing but widen sd: list them
        if c.value == 0.0 and c.label not in shown and c.label not in parent_labels:
            terms.append(Term(c.label, 0.0))
            shown.add(c.label)
    pka = sum(values)
    if bound is not None and not bound.lower <= pka <= bound.upper:
        edge = bound.lower if pka < bound.lower else bound.upper
        side = "lower" if pka < bound.lower else "upper"
        step = round(edge - pka, 3)
        terms.append(Term(f"bound: {bound.category} estimates kept at or above {edge:g}" if side == "lower"
                          else f"bound: {bound.category} estimates kept at or below {edge:g}", step))
        pka += step
    sd = math.sqrt(parent_sd**2 + sum(variances) + sum([c.sd**2 for c in raw if c.value == 0.0]))
    return tuple(terms), round(pka, 3), round(sd, 2)
