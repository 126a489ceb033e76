"""The workflow config schema: defaults, rejections that name the key, agreement with the package."""

from __future__ import annotations

import copy
import dataclasses
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
import yaml
from snakemake.exceptions import WorkflowError
from snakemake.utils import validate

from annotate.io.library import LibrarySpec
from annotate.pipeline import libraries_to_run, library_specs, settings_from_config
from annotate.pipeline.config import suggested_chunk_size
from annotate.settings import SETTING_NAMES, Settings

ROOT = Path(__file__).resolve().parents[1]
SCHEMA_PATH = ROOT / "workflow" / "schemas" / "config.schema.yaml"
SCHEMA = yaml.safe_load(SCHEMA_PATH.read_text())
DEFAULT_CONFIG = yaml.safe_load((ROOT / "config" / "config.yaml").read_text())


def validated(config: dict) -> dict:
    """What workflow/rules/common.smk does before any rule sees the config."""
    config = copy.deepcopy(config)
    if "libraries" in config or "demo_libraries" in config:
        config["libraries"] = libraries_to_run(config)
    validate(config, str(SCHEMA_PATH))
    return config


def rejection(config: dict) -> tuple[list[str | int], str]:
    """Where in the config validation failed, and the validator's one-line reason."""
    with pytest.raises(WorkflowError, match="Error validating config file") as caught:
        validated(config)
    error = caught.value.__context__
    assert isinstance(error, jsonschema.ValidationError)
    return list(error.absolute_path), error.message


MINIMAL = {"libraries": {"mine": "data/mine.sdf"}, "ph": [7.4, 5.0], "outdir": "out"}


def test_every_key_has_a_description_and_a_default() -> None:
    entry = SCHEMA["properties"]["libraries"]["additionalProperties"]["properties"]
    for properties in (SCHEMA["properties"], entry):
        for key, spec in properties.items():
            assert "description" in spec, key
            assert "default" in spec or key == "path", key


def test_shipped_config_is_valid_and_uses_schema_defaults() -> None:
    config = validated(DEFAULT_CONFIG)
    defaults = {k: v["default"] for k, v in SCHEMA["properties"].items() if k != "libraries"}
    assert {k: v for k, v in config.items() if k != "libraries"} == defaults


def test_a_minimal_user_config_gets_every_other_default() -> None:
    config = validated(MINIMAL)
    assert config["chunk_size"] == SCHEMA["properties"]["chunk_size"]["default"]
    assert config["libraries"]["mine"] == {
        "path": "data/mine.sdf",
        "format": "auto",
        "structure": "auto",
        "smiles_column": "smiles",
        "molblock_column": "molblock",
        "id_column": "id",
    }


@pytest.mark.parametrize(
    ("change", "where", "reason"),
    [
        ({"ph": [7.4, 15]}, ["ph", 1], "15 is greater than the maximum of 14"),
        ({"ph": []}, ["ph"], "[] should be non-empty"),
        ({"chunk_size": -5}, ["chunk_size"], "-5 is less than the minimum of 1"),
        ({"chunk_size": 0}, ["chunk_size"], "0 is less than the minimum of 1"),
        ({"min_fraction": 0}, ["min_fraction"], "0 is less than or equal to the minimum of 0"),
        ({"chunksize": 10}, [], "('chunksize' was unexpected)"),
        (
            {"libraries": {"mine": {"path": "x.sdf", "format": "mol2"}}},
            ["libraries", "mine", "format"],
            "'mol2'",
        ),
        (
            {"libraries": {"mine": {"path": "x.sdf", "smiles_col": "s"}}},
            ["libraries", "mine"],
            "'smiles_col'",
        ),
        ({"libraries": {"../up": "x.sdf"}}, ["libraries"], "'../up' does not match"),
        ({"libraries": {}}, ["libraries"], "{} should be non-empty"),
        ({"libraries": ["x.sdf"]}, ["libraries"], "is not of type 'object'"),
    ],
)
def test_bad_values_are_rejected_naming_the_key(change: dict, where: list, reason: str) -> None:
    path, message = rejection({**MINIMAL, **change})
    assert path == where
    assert reason in message


def test_missing_libraries_are_rejected() -> None:
    assert rejection({"ph": [7.4]}) == ([], "'libraries' is a required property")


def test_settings_defaults_match_the_schema() -> None:
    config = validated(MINIMAL)
    assert settings_from_config({**config, "ph": [7.4]}) == Settings()
    assert settings_from_config(config).ph == (7.4, 5.0)


def test_every_setting_is_a_schema_key_and_the_workflow_params_are_enough() -> None:
    """The jobs get only the SETTING_NAMES keys (common.smk): they must make the whole Settings."""
    assert set(SETTING_NAMES) <= set(SCHEMA["properties"])
    assert set(SETTING_NAMES) <= set(DEFAULT_CONFIG)
    config = validated({**MINIMAL, "min_fraction": 0.2, "max_species": 2, "neutralize": False})
    params = {key: config[key] for key in SETTING_NAMES}
    assert settings_from_config(params) == Settings(ph=(7.4, 5.0), min_fraction=0.2, max_species=2, neutralize=False)


def test_library_defaults_match_the_schema() -> None:
    entry = SCHEMA["properties"]["libraries"]["additionalProperties"]["properties"]
    for field in dataclasses.fields(LibrarySpec):
        if field.name in entry and "default" in entry[field.name]:
            assert field.default == entry[field.name]["default"], field.name
    config = validated(MINIMAL)
    assert library_specs(config["libraries"]) == {
        "mine": LibrarySpec(name="mine", path=Path("data/mine.sdf"))
    }


def test_user_rules_becomes_a_path() -> None:
    config = validated({**MINIMAL, "user_rules": "my_rules.tsv"})
    assert settings_from_config(config).user_rules == Path("my_rules.tsv")


@pytest.mark.slow
def test_the_workflow_itself_refuses_a_bad_config_naming_the_key(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump({**MINIMAL, "ph": [15]}))
    run = subprocess.run(
        [
            sys.executable,
            "-m",
            "snakemake",
            "--dry-run",
            "--snakefile",
            str(ROOT / "Snakefile"),
            "--directory",
            str(tmp_path),
            "--configfile",
            str(bad),
        ],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        check=False,
    )
    assert run.returncode != 0
    assert "Error validating config file" in run.stdout
    assert "15 is greater than the maximum of 14" in run.stdout
    assert "On instance['ph'][0]" in run.stdout


@pytest.mark.parametrize(
    ("records", "cores", "expected"),
    [
        (100_000, 2, 10_000),  # 5,000 per chunk would double the jobs for no idle core saved
        (400_000, 2, 20_000),  # ten chunks per core
        (1_000_000, 2, 50_000),
        (1_000_000, 1, 50_000),  # capped: a job of a minute or so
        (10_000_000, 128, 10_000),  # 7,813 per chunk, raised to the floor
        (3, 4, 10_000),
    ],
)
def test_suggested_chunk_size_follows_the_readme_rule(records: int, cores: int, expected: int) -> None:
    assert suggested_chunk_size(records, cores=cores) == expected
