"""Site estimate: memoised explanation and the parent subtraction."""

from __future__ import annotations

from rdkit import Chem

from annotate.pka import estimate
from annotate.pka.contributions import Contribution, net_of_parent
from annotate.pka.estimate import estimate_site
from annotate.pka.substituents import SubstituentIndex
from annotate.ruleset import load_ruleset
from annotate.sites.perceive import find_sites

RULES = load_ruleset(None)


def _sites(smiles: str) -> list:
    mol = Chem.MolFromSmiles(smiles)
    index = SubstituentIndex(mol, RULES.substituents)
    return [
        estimate_site(mol, m, rules=RULES, index=index)
        for m in find_sites(mol, RULES.matcher)
    ]


def test_memoised_explanation_equals_a_fresh_one() -> None:
    smiles = ["Oc1ccc(Cl)cc1", "Oc1ccc(Cl)cc1C", "NCC(=O)O", "OC(=O)CC(F)(F)F", "c1ccncc1"]
    estimate._explained.cache_clear()
    cold = [_sites(s) for s in smiles]
    warm = [_sites(s) for s in smiles]
    assert estimate._explained.cache_info().hits > 0
    assert cold == warm


def test_same_contributions_under_another_rule_are_not_confused() -> None:
    raw = (Contribution("chloro para (sigma 0.23)", -0.51, 0.08),)
    a = estimate._explained("rule a", "Oc1ccccc1", 9.99, 0.1, raw, ())
    b = estimate._explained("rule b", "Oc1ccccc1", 9.0, 0.1, raw, ())
    assert a[0][0].label == "rule a (parent Oc1ccccc1)" and b[0][0].label == "rule b (parent Oc1ccccc1)"
    assert abs(a[1] - b[1] - 0.99) < 1e-9


def test_net_of_parent_subtracts_parent_terms_label_by_label() -> None:
    h = Contribution("H on anchor", -0.5, 0.05)
    cl = Contribution("chloro on alpha-C", -1.2, 0.18)
    net = net_of_parent([h, h, h, cl, cl], [h, h])
    assert [(t.label, round(t.value, 6)) for t in net] == [
        ("H on anchor", -0.5),
        ("chloro on alpha-C x2", -2.4),
    ]
    # variance adds over the molecule's own terms only: 2 x 0.18^2
    assert abs(net[1].sd - (2 * 0.18**2) ** 0.5) < 1e-12


def test_net_of_parent_drops_terms_the_parent_already_carries() -> None:
    h = Contribution("H on anchor", -0.5, 0.05)
    assert net_of_parent([h, h], [h, h]) == []


def test_second_ring_adds_its_own_terms() -> None:
    """A sulfonamide N feels the ring on the S as well as the ring on the N: the rule's
    second anchor (:3) adds that ring's Hammett terms with rho2, labelled as such."""
    plain = _sites("O=S(=O)(Nc1ncccn1)c1ccccc1")
    nitro = _sites("O=S(=O)(Nc1ncccn1)c1ccc([N+](=O)[O-])cc1")
    acid = [s for s in nitro if s.kind == "acid"][0]
    rule = next(r for r in RULES.groups if r.name == acid.group)
    assert rule.rho2 > 0
    second = [t for t in acid.terms if t.label.startswith(f"second ring (rho {rule.rho2:.2f}): nitro para")]
    assert len(second) == 1 and second[0].value < 0
    base = [s for s in plain if s.kind == "acid"][0]
    assert abs((base.pka - acid.pka) + second[0].value) < 2e-3
    assert abs(sum(t.value for t in acid.terms) - acid.pka) < 2e-3
