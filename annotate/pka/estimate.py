"""Site pKa = parent pKa + substituent terms, each term kept for the explanation."""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache

from rdkit import Chem

from annotate.pka.aromatic import hammett_contributions
from annotate.pka.contributions import Contribution, net_of_parent
from annotate.pka.inductive import taft_contributions
from annotate.pka.substituents import SubstituentIndex, SubstituentTable
from annotate.results import Site, Term
from annotate.sites.perceive import SiteMatch
from annotate.sites.rules import GroupRule

#: distinct (rule, raw contributions) combinations kept; a few thousand cover a library
_EXPLAINED_CACHE = 4096


def substituent_contributions(
    mol: Chem.Mol,
    rule: GroupRule,
    match: tuple[int, ...],
    table: SubstituentTable,
    index: SubstituentIndex | None = None,
) -> list[Contribution]:
    """Raw contributions of everything outside the group, by the rule's model, then
    those of the rule's second aromatic ring (anchor mapped :3), if it has one."""
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


def estimate_site(
    mol: Chem.Mol,
    site: SiteMatch,
    *,
    table: SubstituentTable,
    index: SubstituentIndex,
    parent_terms: tuple[Contribution, ...],
) -> Site:
    """A Site whose pKa is exactly the sum of its listed terms."""
    rule = site.rule
    raw = substituent_contributions(mol, rule, site.match, table, index)
    terms, pka, sd = _explained(rule.name, rule.parent, rule.pka, rule.sd, tuple(raw), parent_terms)
    return Site(
        atom=site.atom,
        kind=rule.kind,
        group=rule.name,
        category=rule.category,
        pka=pka,
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
) -> tuple[tuple[Term, ...], float, float]:
    """Terms, rounded pKa and sd of a site of rule ``name`` with these raw
    contributions. A library repeats the same few combinations of rule and
    substituents (nine sites in ten in the benchmark set), so each combination
    is worked out once."""
    terms = [Term(f"{name} (parent {parent})", parent_pka)]
    values = [parent_pka]
    variances = []
    for label, value, sd in net_of_parent(raw, parent_terms):
        value = round(value, 3)
        terms.append(Term(label, value))
        values.append(value)
        variances.append(sd**2)
    pka = sum(values)
    sd = math.sqrt(parent_sd**2 + sum(variances) + sum([c.sd**2 for c in raw if c.value == 0.0]))
    return tuple(terms), round(pka, 3), round(sd, 2)
