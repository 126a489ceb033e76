"""Site pKa = parent pKa + substituent terms, each term kept for the explanation."""

from __future__ import annotations

import math

from rdkit import Chem

from annotate.pka.aromatic import hammett_contributions
from annotate.pka.contributions import Contribution, net_of_parent
from annotate.pka.inductive import taft_contributions
from annotate.pka.substituents import SubstituentIndex, SubstituentTable
from annotate.results import Site, Term
from annotate.sites.perceive import SiteMatch
from annotate.sites.rules import GroupRule


def substituent_contributions(
    mol: Chem.Mol,
    rule: GroupRule,
    match: tuple[int, ...],
    table: SubstituentTable,
    index: SubstituentIndex | None = None,
) -> list[Contribution]:
    """Raw contributions of everything outside the group, by the rule's model."""
    if rule.model == "fixed":
        return []
    index = index or SubstituentIndex(mol, table)
    group = frozenset(match)
    anchor = match[rule.anchor_index]
    if rule.model == "taft":
        return taft_contributions(mol, anchor, group, rule.rho, index)
    return hammett_contributions(mol, anchor, group, rule, index, table)


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
    terms = [Term(f"{rule.name} (parent {rule.parent})", rule.pka)]
    values = [rule.pka]
    variances = []
    for label, value, sd in net_of_parent(raw, parent_terms):
        value = round(value, 3)
        terms.append(Term(label, value))
        values.append(value)
        variances.append(sd**2)
    pka = sum(values)
    sd = math.sqrt(rule.sd**2 + sum(variances) + sum([c.sd**2 for c in raw if c.value == 0.0]))
    return Site(
        atom=site.atom,
        kind=rule.kind,
        group=rule.name,
        category=rule.category,
        pka=round(pka, 3),
        pka_sd=round(sd, 2),
        terms=tuple(terms),
    )
