"""Textbook worked examples of the equilibrium maths, checked through the public API."""

from __future__ import annotations

import math

import numpy as np
import pytest

from annotate import Settings, annotate_smiles
from annotate.species.interactions import InteractionTable
from annotate.species.microstates import build_model

NO_INTERACTION = InteractionTable(like=(0.0,) * 13, opposite=(0.0,) * 13)


def _single_site_fractions(pka: float, ph: float) -> np.ndarray:
    model = build_model(["acid"], [pka], np.zeros((1, 1)), np.zeros((1, 1)), base_charge=0, ph_values=(ph,), table=NO_INTERACTION)
    return model.fractions(ph), model


def test_henderson_hasselbalch_half_at_pka() -> None:
    """At pH = pKa the acid and its conjugate base are 50/50 (Henderson-Hasselbalch)."""
    fractions, model = _single_site_fractions(4.76, 4.76)
    protonated = fractions[model.protonated[:, 0]].sum()
    assert protonated == pytest.approx(0.5, abs=1e-9)


@pytest.mark.parametrize(("offset", "expected_protonated"), [(-1.0, 10 / 11), (1.0, 1 / 11)])
def test_henderson_hasselbalch_one_unit_away(offset: float, expected_protonated: float) -> None:
    """One unit from the pKa the ratio is 10:1, i.e. 90.9 % / 9.1 % (textbook worked example)."""
    fractions, model = _single_site_fractions(7.0, 7.0 + offset)
    assert fractions[model.protonated[:, 0]].sum() == pytest.approx(expected_protonated, abs=1e-9)


def test_acetic_acid_fraction_at_physiological_ph() -> None:
    """Acetic acid (pKa 4.76, CRC Handbook, from memory) at pH 7.4 is > 99.7 % ionized."""
    result = annotate_smiles("CC(=O)O", settings=Settings(ph=(7.4,)))
    dominant = result.ph_states[0].dominant
    assert dominant.charge == -1
    expected = 1 / (1 + 10 ** (result.sites[0].pka - 7.4))
    assert dominant.fraction == pytest.approx(expected, abs=1e-5)


def test_diprotic_macro_versus_micro_constants() -> None:
    """Two equivalent non-interacting sites: macro pKa1 = pk - log 2, pKa2 = pk + log 2.

    The statistical factor of a symmetric diacid (worked example in Albert &
    Serjeant, The Determination of Ionization Constants; from memory).
    """
    pk = 5.0
    model = build_model(
        ["acid", "acid"], [pk, pk], np.array([[0, 20], [20, 0]]), np.zeros((2, 2)),
        base_charge=0, ph_values=(5.0,), table=NO_INTERACTION,
    )
    low, high = model.macro_pka
    assert low == pytest.approx(pk - math.log10(2), abs=1e-3)
    assert high == pytest.approx(pk + math.log10(2), abs=1e-3)


def test_interaction_separates_macro_constants() -> None:
    """Like charges 3 bonds apart push the two steps apart by W(3) beyond log 4."""
    table = InteractionTable(like=(0.0, 0.0, 0.0, 2.5), opposite=(0.0,) * 4)
    model = build_model(
        ["base", "base"], [10.0, 10.0], np.array([[0, 3], [3, 0]]), np.zeros((2, 2)),
        base_charge=0, ph_values=(7.0,), table=table,
    )
    low, high = model.macro_pka
    assert high - low == pytest.approx(2.5 + math.log10(4), abs=0.02)


def test_glycine_zwitterion_dominates_at_neutral_ph() -> None:
    """Glycine: 2.34 / 9.60 (CRC Handbook, from memory); zwitterion dominant at pH 6."""
    result = annotate_smiles("NCC(=O)O", settings=Settings(ph=(6.0,)))
    low, high = result.macro_pka
    assert low == pytest.approx(2.34, abs=0.5)
    assert high == pytest.approx(9.60, abs=0.6)
    dominant = result.ph_states[0].dominant
    assert dominant.charge == 0 and "[NH3+]" in dominant.smiles and "[O-]" in dominant.smiles


def test_phosphoric_acid_three_steps() -> None:
    """H3PO4 2.15 / 7.20 / 12.35 (CRC Handbook, from memory) from one parent and W(2)."""
    assert annotate_smiles("OP(=O)(O)O").macro_pka == pytest.approx((2.15, 7.20, 12.35), abs=0.2)
