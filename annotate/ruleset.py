"""Everything the engine reads from data files, loaded and checked once per process."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

from rdkit import Chem

from annotate.pka.bounds import Bound, load_bounds
from annotate.pka.contributions import Contribution
from annotate.pka.ring_systems import RingSystemTable, load_ring_systems
from annotate.pka.substituents import SubstituentTable, load_substituents
from annotate.sites.perceive import RuleMatcher
from annotate.sites.rules import GroupRule, load_contexts, load_group_rules
from annotate.species.interactions import InteractionTable, load_interactions
from annotate.tables import RuleFileError


@dataclass(frozen=True, slots=True)
class RuleSet:
    groups: tuple[GroupRule, ...]
    matcher: RuleMatcher
    substituents: SubstituentTable
    interactions: InteractionTable
    #: per rule name, the substituent contributions of its own parent compound
    parent_terms: dict[str, tuple[Contribution, ...]]
    #: ring-system parents and position increments of ring-N bases
    ring_systems: RingSystemTable
    #: range of an estimate, by category
    bounds: dict[str, Bound]


@lru_cache(maxsize=8)
def load_ruleset(user_rules: Path | None = None) -> RuleSet:
    """Load all tables; a parent compound that its own rule does not match is an error."""
    from annotate.pka.estimate import substituent_contributions  # noqa: PLC0415 (cycle)

    groups = load_group_rules(user_rules)
    contexts = load_contexts()
    unknown = sorted({r.context for r in groups if r.context and r.context not in contexts})
    if unknown:
        raise RuleFileError(f"group rules name unknown context(s): {', '.join(unknown)} (see contexts.tsv)")
    substituents = load_substituents()
    parent_terms: dict[str, tuple[Contribution, ...]] = {}
    for rule in groups:
        parent = Chem.MolFromSmiles(rule.parent)
        matches = [m for m in parent.GetSubstructMatches(rule.pattern) if _in_context(parent, m[rule.site_index], rule, contexts)]
        if not matches:
            raise RuleFileError(f"group rule {rule.name!r}: parent {rule.parent} does not match its own SMARTS")
        parent_terms[rule.name] = tuple(
            substituent_contributions(parent, rule, matches[0], substituents)
        )
    return RuleSet(
        groups,
        RuleMatcher(groups, contexts),
        substituents,
        load_interactions(),
        parent_terms,
        load_ring_systems(),
        load_bounds(),
    )


def _in_context(mol: Chem.Mol, atom: int, rule: GroupRule, contexts: dict[str, Chem.Mol]) -> bool:
    if not rule.context:
        return True
    return any(m[0] == atom for m in mol.GetSubstructMatches(contexts[rule.context], uniquify=False))
