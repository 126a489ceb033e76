"""Record text to molecule: stray characters are reported where they are, good SMILES pass."""

from __future__ import annotations

import pytest

from annotate.parse import _stray_character, mol_from_smiles


def test_every_character_outside_bang_to_tilde_is_stray() -> None:
    """Printable ASCII but space passes (the common case, checked in one go); all else is named."""
    for code in [*range(0x110), 0x2003, 0x3000, 0xFEFF, 0x1F600]:
        char = chr(code)
        reason = _stray_character(f"CC{char}O")
        assert (reason is None) == ("!" <= char <= "~"), (hex(code), reason)
        if reason is not None:
            assert "position 3" in reason


@pytest.mark.parametrize(
    "text",
    ["CCO", "c1ccccc1C(=O)[O-]", "C[C@@H](N)C(=O)O", "[2H]OC#N", "!\"#$%&'()*+,-./09:;<=>?@AZ[\\]^_`az{|}~"],
)
def test_printable_ascii_passes(text: str) -> None:
    assert _stray_character(text) is None


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("CC(=O)O junk", "SMILES contains whitespace at position 8; the text after it would be ignored"),
        ("CCO\tx", "SMILES contains whitespace at position 4; the text after it would be ignored"),
        ("CC\x1fO", "SMILES contains whitespace at position 3; the text after it would be ignored"),
        ("CC\x00O", "SMILES contains a non-ASCII or control character '\\x00' at position 3"),
        ("CC\x7fO", "SMILES contains a non-ASCII or control character '\\x7f' at position 3"),
        ("CCé", "SMILES contains a non-ASCII or control character 'é' at position 3"),
        ("CC\u00a0O", "SMILES contains whitespace at position 3; the text after it would be ignored"),
    ],
)
def test_stray_characters_are_named_with_their_position(text: str, message: str) -> None:
    assert _stray_character(text) == message
    mol, reason = mol_from_smiles(text)
    assert mol is None and reason == message


def test_cxsmiles_block_after_a_space_is_allowed() -> None:
    assert _stray_character("CC(=O)O |$;;;$|") is None
    mol, reason = mol_from_smiles("C[C@H](O)CC |&1:1|")
    assert mol is not None and reason is None
