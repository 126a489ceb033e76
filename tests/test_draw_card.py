"""Molecule cards: the picture shows each site once, the species curves follow the model, failures still draw."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

from annotate.cli import main
from annotate.engine import annotate_smiles
from annotate.draw import GRID, card_svg, species_curves, species_label, write_cards
from annotate.settings import Settings

SVG = "{http://www.w3.org/2000/svg}"


def _texts(svg: str) -> list[str]:
    return ["".join(e.itertext()) for e in ET.fromstring(svg).iter(f"{SVG}text")]


def test_card_lists_every_site_in_the_legend_with_pka_and_kind() -> None:
    texts = _texts(card_svg("NCC(=O)O", id="gly"))
    assert "primary aliphatic amine" in texts and "aliphatic carboxylic acid" in texts
    assert texts.count("acid") == 1 and texts.count("base") == 1
    for site in annotate_smiles("NCC(=O)O").sites:  # the legend shows the engine's own numbers
        assert f"{site.pka:.2f} ± {site.pka_sd:.2f}" in texts


def test_glycine_zwitterion_peaks_between_its_two_pka() -> None:
    # glycine pKa 2.34 and 9.60, isoelectric point 5.97 (CRC Handbook, from memory)
    curves = species_curves("NCC(=O)O", Settings())
    zwitterion = curves[(0, (True, False))]
    peak_ph = GRID[max(range(len(GRID)), key=zwitterion.__getitem__)]
    assert 4.0 <= peak_ph <= 8.0
    assert zwitterion[GRID.index(6.0)] > 0.95
    cation, anion = curves[(1, (True, True))], curves[(-1, (False, False))]
    assert cation[0] > 0.9 and anion[-1] > 0.9


def test_fractions_sum_to_one_at_every_grid_point() -> None:
    curves = species_curves("OC(=O)CCN1CCN(CC1)C", Settings())
    for i, _ in enumerate(GRID):
        assert abs(sum(v[i] for v in curves.values()) - 1.0) < 0.05  # species under 2 % are left out


def test_species_label_names_charge_and_protonated_sites() -> None:
    assert species_label(1, (True, True)) == "+1, H on 1 2"
    assert species_label(0, (False, False)) == "0, H on none"


def test_unparsable_molecule_gets_a_card_with_its_message(tmp_path: Path) -> None:
    (path,) = write_cards([("broken", "C1CC")], tmp_path)
    texts = _texts(path.read_text())
    assert any(t.startswith("could not draw:") and "SMILES" in t for t in texts)


def test_cli_draw_writes_one_card_per_molecule_named_by_position(tmp_path: Path, capsys) -> None:
    assert main(["--draw", str(tmp_path), "--draw-format", "png", "CC(=O)O", "c1ccncc1"]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["0.png", "1.png"]
    assert (tmp_path / "0.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
