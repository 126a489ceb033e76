"""Rule gates: relaxations of their rules, so screening by them never loses a site."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from rdkit import Chem

from annotate.ruleset import load_ruleset
from annotate.sites.gates import gates_for, without_recursion
from annotate.sites.perceive import RuleMatcher

DATA = Path(__file__).parent / "data"
DEMO = Path(__file__).parents[1] / "workflow" / "demo" / "library.smi"


def _corpus() -> list[Chem.Mol]:
    """Handbook molecules (tests/data, each row sourced there), every rule's parent, and the demo library."""
    tables = ("reference_pka.csv", "reference_macro.csv")
    smiles = [row["smiles"] for name in tables for row in csv.DictReader((DATA / name).open())]
    smiles += [rule.parent for rule in load_ruleset(None).groups]
    smiles += [line.split()[0] for line in DEMO.read_text().splitlines()[1:1500] if line.strip()]
    mols = [Chem.MolFromSmiles(s) for s in smiles]
    return [m for m in mols if m is not None]


@pytest.mark.parametrize(
    ("smarts", "relaxed"),
    [
        ("[N&X3;!$(N-C=O):1]", "[N&X3;*:1]"),
        ("[c;$(c:n),$(c:[o,s])]", "[c;*,*]"),
        ("[O&!$(O-c1:c:c:n:c:c:1)]C", "[O&*]C"),
        ("CC(=O)O", "CC(=O)O"),
    ],
)
def test_recursive_primitives_become_any_atom(smarts: str, relaxed: str) -> None:
    assert without_recursion(smarts) == relaxed
    assert Chem.MolFromSmarts(relaxed) is not None


def test_unbalanced_recursion_is_refused() -> None:
    with pytest.raises(ValueError, match="unbalanced"):
        without_recursion("[N;!$(N-C=O]")


def test_packaged_rules_get_coarse_then_fine_gates() -> None:
    """Every packaged rule is screened: one gate when its site atom has no neighbour, else two."""
    for rule in load_ruleset(None).groups:
        neighbours = rule.pattern.GetAtomWithIdx(rule.site_index).GetDegree()
        gates = gates_for(rule.pattern, rule.site_index, Chem.MolFromSmiles(rule.parent))
        assert len(gates) == (2 if neighbours else 1), (rule.name, gates)
        assert "$(" not in "".join(gates), rule.name


def test_a_gate_that_misses_the_parent_is_left_out() -> None:
    """Belt and braces for user SMARTS: a gate must at least match the rule's own parent."""
    pattern = Chem.MolFromSmarts("[OX2H1:1][c:2]")
    assert gates_for(pattern, 0, Chem.MolFromSmiles("Oc1ccccc1")) == ("[O&X2&H1]", "[O&X2&H1]c")
    assert gates_for(pattern, 0, Chem.MolFromSmiles("CO")) == ("[O&X2&H1]",)


def test_every_gate_matches_wherever_its_rule_matches() -> None:
    rules = load_ruleset(None).groups
    gates = [
        [Chem.MolFromSmarts(g) for g in gates_for(r.pattern, r.site_index, Chem.MolFromSmiles(r.parent))] for r in rules
    ]
    hits = 0
    for mol in _corpus():
        for rule, rule_gates in zip(rules, gates, strict=True):
            if mol.HasSubstructMatch(rule.pattern):
                hits += 1
                assert all(mol.HasSubstructMatch(g) for g in rule_gates), (rule.name, Chem.MolToSmiles(mol))
    assert hits > 1000  # the corpus exercises the rules


def test_matcher_finds_exactly_the_rules_that_match() -> None:
    """The gate tree returns what testing every rule on its own returns, in table order."""
    ruleset = load_ruleset(None)
    matcher = RuleMatcher(ruleset.groups, ruleset.matcher.contexts)
    for mol in _corpus():
        expected = [r for r in ruleset.groups if mol.HasSubstructMatch(r.pattern)]
        assert matcher.matching(mol) == expected, Chem.MolToSmiles(mol)


def test_a_rule_without_a_usable_gate_is_still_tried() -> None:
    """A rule whose gates all fail validation hangs at the top of the tree and is tested on every molecule."""
    ruleset = load_ruleset(None)
    phenol = next(r for r in ruleset.groups if r.name == "phenol")
    ungated = type(phenol)(**{**{f: getattr(phenol, f) for f in phenol.__dataclass_fields__}, "parent": "[Na+]"})
    matcher = RuleMatcher((ungated,), ruleset.matcher.contexts)
    assert matcher.matching(Chem.MolFromSmiles("Oc1ccc(Cl)cc1")) == [ungated]
    assert matcher.matching(Chem.MolFromSmiles("CCO")) == []
