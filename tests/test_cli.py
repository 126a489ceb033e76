"""The ``ionotate`` quick-look command: report, JSON, exit codes, stdin, rule-file errors."""

from __future__ import annotations

import io
import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from annotate.cli import main

# CRC Handbook of Chemistry and Physics, "Dissociation constants of organic acids and bases":
# acetic acid pKa 4.76 at 25 °C (from memory)
ACETIC_PKA = 4.76
ACETIC = "CC(=O)O"


def _json_lines(text: str) -> list[dict]:
    return [json.loads(line) for line in text.splitlines() if line.strip()]


def test_text_report_names_group_pka_and_caution(capsys: pytest.CaptureFixture[str]) -> None:
    assert main([ACETIC]) == 0
    out = capsys.readouterr().out
    assert "carboxylic acid" in out
    site_row = next(line for line in out.splitlines() if "carboxylic acid" in line and "±" in line)
    pka = float(re.search(r"(\d+\.\d+) ± ", site_row).group(1))
    assert abs(pka - ACETIC_PKA) <= 0.3
    assert "estimated pKa" in out  # the term breakdown is shown by default
    assert out.rstrip().splitlines()[-1].startswith("Note: pKa values are estimates")


def test_no_explain_hides_terms(capsys: pytest.CaptureFixture[str]) -> None:
    assert main([ACETIC, "--no-explain"]) == 0
    out = capsys.readouterr().out
    assert "carboxylic acid" in out
    assert "estimated pKa" not in out


def test_json_has_every_field_and_explained_sites(capsys: pytest.CaptureFixture[str]) -> None:
    assert main([ACETIC, "--json"]) == 0
    captured = capsys.readouterr()
    (record,) = _json_lines(captured.out)
    assert set(record) == {"id", "status", "messages", "parent_smiles", "sites", "macro_pka", "ph_states"}
    (site,) = record["sites"]
    assert abs(site["pka"] - ACETIC_PKA) <= 0.3
    assert site["kind"] == "acid"
    assert site["terms"] and {"label", "value"} <= set(site["terms"][0])
    assert site["explain"].endswith(f"total {site['pka']:.2f} ± {site['pka_sd']:.2f}")
    (state,) = record["ph_states"]
    assert state["ph"] == 7.4
    assert state["species"][0]["smiles"] == "CC(=O)[O-]"
    assert "estimates" in captured.err  # caution kept off the JSON stream


def test_unparsable_smiles_exits_1_with_error_line(capsys: pytest.CaptureFixture[str]) -> None:
    assert main([ACETIC, "C1CC"]) == 1
    captured = capsys.readouterr()
    error_lines = [line for line in captured.out.splitlines() if "C1CC" in line]
    assert error_lines and "[error]" in error_lines[0]
    assert "unparsable SMILES" in captured.out
    assert "1 of 2" in captured.err


def test_repeated_ph_gives_one_block_each(capsys: pytest.CaptureFixture[str]) -> None:
    assert main([ACETIC, "--ph", "2", "--ph", "7.4"]) == 0
    out = capsys.readouterr().out
    blocks = re.findall(r"^\s+pH (\S+): mean charge (\S+)", out, flags=re.MULTILINE)
    assert [ph for ph, _ in blocks] == ["2", "7.4"]
    charges = [float(c) for _, c in blocks]
    assert charges[0] > -0.5 > charges[1]  # neutral acid at pH 2, carboxylate at 7.4


def test_stdin_lines_with_and_without_ids(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(sys, "stdin", io.StringIO(f"{ACETIC} vinegar\n\n# skipped\nc1ccncc1\n"))
    assert main(["-", "--json"]) == 0
    records = _json_lines(capsys.readouterr().out)
    assert [(r["id"], r["parent_smiles"]) for r in records] == [("vinegar", ACETIC), ("1", "c1ccncc1")]


BAD_RULES = {
    "missing": None,
    "no-columns": "name\tkind\nacid_x\tacid\n",
    # a row error quotes the row on a second line; the CLI must still print one line
    "short-row": "\t".join(("name", "category", "kind", "smarts", "pka", "parent", "model", "sd", "source"))
    + "\nacid_x\tacid\n",
}


@pytest.mark.parametrize("content", BAD_RULES.values(), ids=BAD_RULES.keys())
def test_bad_rule_file_exits_2(
    content: str | None, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rules = tmp_path / "rules.tsv"
    if content is not None:
        rules.write_text(content, encoding="utf-8")
    assert main([ACETIC, "--rules", str(rules)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    err_lines = captured.err.strip().splitlines()
    assert len(err_lines) == 1 and "rules.tsv" in err_lines[0]


def test_bad_option_value_is_usage_error(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as stop:
        main([ACETIC, "--min-fraction", "1.5"])
    assert stop.value.code == 2
    assert "--min-fraction" in capsys.readouterr().err


def test_installed_console_script() -> None:
    script = Path(sys.executable).with_name("ionotate")
    if not script.exists():
        pytest.skip("console script 'ionotate' not installed next to this interpreter")
    done = subprocess.run(
        [str(script), ACETIC, "--json"], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0, done.stderr
    (record,) = _json_lines(done.stdout)
    assert abs(record["sites"][0]["pka"] - ACETIC_PKA) <= 0.3
