"""Engine steps after site finding: distances, shared per-pH work, molecules without sites, batches."""

from __future__ import annotations

import dataclasses
import logging

import pytest
from rdkit import Chem

import annotate.engine as engine
from annotate import Settings, annotate_mol, annotate_smiles
from annotate.engine import (
    _estimated,
    _model,
    _on_atom,
    _ph_state,
    _site_distances,
    _SpeciesTable,
    _with_interactions,
    annotate_batch,
)
from annotate.parse import mol_from_smiles
from annotate.results import Site
from annotate.ruleset import load_ruleset
from annotate.sites.perceive import find_sites
from annotate.standardize import parent_of

THREE_PH = Settings(ph=(2.0, 7.4, 10.0), max_species=6)


def _expected_distances(mol: Chem.Mol, atoms: list[int]) -> tuple[list[list[int]], list[list[int]]]:
    """From the full distance matrix and ring list, the long way."""
    full = Chem.GetDistanceMatrix(mol)
    rings = mol.GetRingInfo().AtomRings()
    n = len(atoms)
    dist = [[int(full[a][b]) for b in atoms] for a in atoms]
    second = [[0] * n for _ in range(n)]
    for i in range(n):
        for j in range(n):
            shared = [len(r) for r in rings if atoms[i] in r and atoms[j] in r]
            if i != j and shared:
                second[i][j] = min(shared) - dist[i][j]
    return dist, second


def test_site_distances() -> None:
    cases = {
        "C1CNCCN1": [2, 5],  # piperazine N: 3 bonds either way round the ring
        "Nc1cccc(C(=O)O)c1": [0, 6, 8],  # ring atom and atoms off the ring
        "c1ccc2[nH]ccc2c1": [4, 4],  # two sites on one ring atom: the second path is the ring
        "OC(=O)CCC(=O)O": [0, 6],
    }
    for smiles, atoms in cases.items():
        mol = Chem.MolFromSmiles(smiles)
        assert _site_distances(mol, atoms) == _expected_distances(mol, atoms), smiles
    assert _site_distances(Chem.MolFromSmiles("CCO"), [2]) == ([[0]], [[0]])


def test_molecule_without_sites() -> None:
    for smiles, charge in (("CCCC", 0), ("C[N+](C)(C)C", 1)):
        result = annotate_smiles(smiles, settings=THREE_PH)
        assert result.status == "ok" and result.sites == () and result.macro_pka == ()
        for state in result.ph_states:
            assert state.charge_mean == float(charge)
            assert [(s.smiles, s.charge, s.fraction, s.protonated) for s in state.species] == [
                (result.parent_smiles, charge, 1.0, ())
            ]


def test_pH_values_share_work_without_changing_results() -> None:
    """Species SMILES and symmetry keys are kept across pH values; each pH alone gives the same."""
    rules = load_ruleset(None)
    for smiles in ("NCC(=O)O", "OC(=O)CC(O)(CC(=O)O)C(=O)O", "NCCNCCN", "Oc1ccc(cc1)C(=O)O"):
        mol = parent_of(Chem.MolFromSmiles(smiles)).mol
        sites = _estimated(mol, find_sites(mol, rules.matcher), rules)
        model = _model(mol, sites, THREE_PH, rules)
        sites = _with_interactions(sites, model)
        parent_smiles = Chem.MolToSmiles(mol)
        shared = _SpeciesTable(mol, sites, model, parent_smiles)
        together = [_ph_state(shared, model, ph, THREE_PH) for ph in THREE_PH.ph]
        alone = [_ph_state(_SpeciesTable(mol, sites, model, parent_smiles), model, ph, THREE_PH) for ph in THREE_PH.ph]
        assert together == alone, smiles
        assert together == list(annotate_smiles(smiles, settings=THREE_PH).ph_states)


def test_annotate_mol_leaves_its_input_alone() -> None:
    """annotate_smiles may skip the defensive copy (it made the molecule); annotate_mol may not."""
    for smiles in ("CC(=O)[O-].[Na+]", "NCC(=O)O", "[2H]OC(=O)c1ccccc1"):
        mol = Chem.MolFromSmiles(smiles)
        block = Chem.MolToMolBlock(mol)
        result = annotate_mol(mol, settings=THREE_PH)
        assert Chem.MolToMolBlock(mol) == block
        assert not mol.HasProp("_smilesAtomOutputOrder"), "the parent's SMILES was written on the input"
        assert result == annotate_smiles(smiles, settings=THREE_PH)


def test_moving_a_site_keeps_every_other_field() -> None:
    """_on_atom lists Site's fields by hand; a field added to Site must not be dropped."""
    values = {f.name: (f"value of {f.name}" if f.name != "atom" else 3) for f in dataclasses.fields(Site)}
    site = Site(**values)
    assert _on_atom(site, 7) == dataclasses.replace(site, atom=7)


BATCH_SMILES = ["OC(=O)c1ccccc1", "NCCc1ccc(O)cc1", "", "C1CC", "[Na+].[Cl-]", "NCC(=O)O", "Oc1ccncc1"]


def test_a_batch_gives_what_records_one_at_a_time_give() -> None:
    """Step by step over a batch (cache-friendly) and record by record are the same results."""
    parsed = [mol_from_smiles(s) for s in BATCH_SMILES]
    ids = [f"r{i}" for i in range(len(BATCH_SMILES))]
    batch = annotate_batch([m for m, _ in parsed], ids=ids, reasons=[r for _, r in parsed], settings=THREE_PH, owned=True)
    alone = [annotate_smiles(s, id=i, settings=THREE_PH) for s, i in zip(BATCH_SMILES, ids, strict=True)]
    assert [a.result for a in batch] == alone
    assert [a.result.status for a in batch] == ["ok", "ok", "error", "error", "error", "ok", "ok"]
    assert [a.parent is not None for a in batch] == [r.status != "error" for r in alone]


def test_a_step_failing_on_one_record_costs_only_that_record(monkeypatch: pytest.MonkeyPatch) -> None:
    real = engine.find_sites

    def flaky(mol, matcher):  # noqa: ANN001, ANN202
        if mol.GetNumAtoms() == 5:  # glycine
            raise RuntimeError("boom")
        return real(mol, matcher)

    monkeypatch.setattr(engine, "find_sites", flaky)
    results = list(engine.annotate_many(["OC(=O)c1ccccc1", "NCC(=O)O", "Oc1ccncc1"]))
    assert [r.status for r in results] == ["ok", "error", "ok"]
    assert results[1].messages == ("internal error: RuntimeError: boom",)
    assert [r.id for r in results] == ["0", "1", "2"]


def test_an_internal_error_logs_its_traceback_and_the_row_keeps_one_line(
    monkeypatch: pytest.MonkeyPatch, caplog: pytest.LogCaptureFixture
) -> None:
    def broken(mol, matcher):  # noqa: ANN001, ANN202
        raise RuntimeError("boom")

    monkeypatch.setattr(engine, "find_sites", broken)
    with caplog.at_level(logging.ERROR, logger="annotate.engine"):
        results = list(engine.annotate_many(["NCC(=O)O"]))
    assert results[0].messages == ("internal error: RuntimeError: boom",)
    [logged] = [r for r in caplog.records if r.name == "annotate.engine"]
    assert "'0'" in logged.getMessage()
    assert logged.exc_info is not None
    assert "Traceback" in caplog.text and 'raise RuntimeError("boom")' in caplog.text
