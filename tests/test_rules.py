"""Rule tables: they load, every row is sourced, bad rows fail with their line."""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest

from annotate import Settings, annotate_smiles
from annotate.ruleset import load_ruleset
from annotate.sites.rules import load_group_rules
from annotate.tables import RuleFileError, packaged, rule_table_checksums

HEADER = "name\tcategory\tkind\tsmarts\tpka\tparent\tmodel\trho\tsigma\tortho_k\tortho_c\toverlap\tsd\tsource\n"


def test_packaged_tables_load_with_sources() -> None:
    rules = load_ruleset(None)
    assert len(rules.groups) >= 60
    assert all(r.source for r in rules.groups)
    assert len({r.category for r in rules.groups}) >= 15
    assert all(s.source for s in rules.substituents.rows)


def test_every_parent_is_predicted_at_its_own_value() -> None:
    """The parent compound must come out at exactly the tabulated pKa (before interactions)."""
    for rule in load_ruleset(None).groups:
        sites = [s for s in annotate_smiles(rule.parent).sites if s.group == rule.name]
        assert sites, rule.name
        head = sites[0].terms[0]
        assert head.value == rule.pka


def test_explanation_terms_add_up_to_pka() -> None:
    for smiles in ("OC(=O)CC(F)(F)F", "Oc1ccc(Cl)cc1[N+](=O)[O-]", "NCC(=O)O", "C1COCCN1"):
        for site in annotate_smiles(smiles).sites:
            assert sum(t.value for t in site.terms) == pytest.approx(site.pka, abs=2e-3)
            assert site.explain.endswith(f"total {site.pka:.2f} ± {site.pka_sd:.2f}")


def _write(tmp_path: Path, body: str) -> Path:
    path = tmp_path / "mine.tsv"
    path.write_text(HEADER + body)
    return path


def test_user_row_overrides_packaged_row(tmp_path: Path) -> None:
    path = _write(tmp_path, "phenol\tphenol\tacid\t[OX2H1:1][c:2]\t9.00\tOc1ccccc1\thammett\t2.23\tp-\t0.85\t0\tseparate\t0.3\tmy lab\n")
    rules = load_group_rules(path)
    assert [r.pka for r in rules if r.name == "phenol"] == [9.0]
    result = annotate_smiles("Oc1ccccc1", settings=Settings(user_rules=path))
    assert result.sites[0].pka == pytest.approx(9.0)


def test_user_row_with_new_name_is_tried_first(tmp_path: Path) -> None:
    path = _write(tmp_path, "my thiophenol\tthiol\tacid\t[SX2H1:1]c\t6.0\tSc1ccccc1\tfixed\t\t\t\t\tseparate\t0.3\tmy lab\n")
    result = annotate_smiles("Sc1ccccc1", settings=Settings(user_rules=path))
    assert result.sites[0].group == "my thiophenol"


@pytest.mark.parametrize(
    ("row", "problem"),
    [
        ("bad\tx\tacid\t[OX2H1:1\t4\tCC(=O)O\tfixed\t\t\t\t\t\t0.3\tme\n", "invalid SMARTS"),
        ("bad\tx\tacid\t[OX2H1]C=O\t4\tCC(=O)O\tfixed\t\t\t\t\t\t0.3\tme\n", "no atom mapped :1"),
        ("bad\tx\tsalt\t[OX2H1:1]C=O\t4\tCC(=O)O\tfixed\t\t\t\t\t\t0.3\tme\n", "kind must be"),
        ("bad\tx\tacid\t[OX2H1:1]C=O\tfour\tCC(=O)O\tfixed\t\t\t\t\t\t0.3\tme\n", "not a number"),
        ("bad\tx\tacid\t[OX2H1:1]C=O\t4\tCC(=O)O\tfixed\t\t\t\t\t\t0.3\t\n", "'source' is empty"),
        ("bad\tx\tacid\t[OX2H1:1][C:2](=O)[c:3]\t4\tOC(=O)c1ccccc1\ttaft\t1.6\t\t\t\t\t0.3\tme\n", "mapped :3"),
    ],
)
def test_bad_user_row_names_file_and_line(tmp_path: Path, row: str, problem: str) -> None:
    path = _write(tmp_path, row)
    with pytest.raises(RuleFileError, match=problem) as err:
        load_group_rules(path)
    assert f"{path}:2" in str(err.value)


def test_missing_column_is_rejected(tmp_path: Path) -> None:
    path = tmp_path / "mine.tsv"
    path.write_text("name\tkind\tsmarts\n")
    with pytest.raises(RuleFileError, match="header lacks"):
        load_group_rules(path)


def test_group_table_is_inside_the_package() -> None:
    assert packaged("groups.tsv").is_file()


def test_rule_table_checksums_name_every_packaged_table_and_a_user_file(tmp_path: Path) -> None:
    user = tmp_path / "mine.tsv"
    user.write_text(HEADER)
    sums = rule_table_checksums(user)
    for name in ("groups.tsv", "substituents.tsv", "interactions.tsv", "contexts.tsv"):
        assert sums[f"data/{name}"] == hashlib.sha256(packaged(name).read_bytes()).hexdigest()
    assert sums["user_rules/mine.tsv"] == hashlib.sha256(HEADER.encode()).hexdigest()
    # SHA-256 of the empty message, FIPS 180-2 appendix / NIST example values
    user.write_text("")
    assert rule_table_checksums(user)["user_rules/mine.tsv"] == (
        "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
    )
    assert not any(key.startswith("user_rules/") for key in rule_table_checksums(None))
