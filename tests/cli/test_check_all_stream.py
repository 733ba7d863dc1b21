"""`formdb check --all` streams: a summary line per stored formula, JSON array, JSON lines."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from formdb.cli.main import cli
from formdb.services.checking.demo import demo_formula_paths, run_demo


@pytest.fixture(scope="module")
def library(tmp_path_factory: pytest.TempPathFactory) -> str:
    path = tmp_path_factory.mktemp("stream") / "demo.sqlite"
    run_demo(keep=path, user="test")  # stores the six demo formulas of the invented lab
    return str(path)


def _run(library: str, *args: str):
    return CliRunner().invoke(cli, ["--db", library, "check", *args])


def test_text_summary_has_a_line_per_stored_formula_and_the_cautions(library: str) -> None:
    result = _run(library, "--all")
    # two demo formulas carry error findings: the body wash's sulfate with a quaternary (ION01)
    # and the body lotion's benzoate over the leave-on limit (LIM01)
    assert result.exit_code == 1
    lines = result.output.splitlines()
    assert lines[0].split()[:2] == ["formula", "type"]
    assert sum(1 for line in lines if line.startswith("Larkspur LB-")) == 6
    assert "6 formula(s) checked, 2 with errors" in result.output
    assert "screening aid" in result.output


def test_json_is_the_contract_array(library: str) -> None:
    result = _run(library, "--all", "--format", "json")
    data = json.loads(result.output)
    assert isinstance(data, list) and len(data) == len(demo_formula_paths())
    for item in data:
        assert {"formula", "predicted_type", "blend_hlb", "required_hlb", "dispersed_fraction",
                "findings"} <= set(item)


def test_jsonl_gives_one_object_per_line(library: str) -> None:
    result = _run(library, "--all", "--format", "jsonl")
    objects = [json.loads(line) for line in result.output.splitlines()]
    assert len(objects) == 6 and all("findings" in o for o in objects)


def test_one_formula_in_jsonl_and_json_file_output(library: str, tmp_path) -> None:
    one = _run(library, str(demo_formula_paths()[0]), "--format", "jsonl")
    assert one.exit_code == 0 and len(one.output.splitlines()) == 1
    out = tmp_path / "all.json"
    written = _run(library, "--all", "--format", "json", "--out", str(out))
    assert "report written to" in written.output
    assert len(json.loads(out.read_text(encoding="utf-8"))) == 6
    assert not list(tmp_path.glob(".*.part"))
