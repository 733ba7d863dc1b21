"""formdb.api, the public Python face: the README's example runs verbatim, the three ways of
giving a formula agree with each other and with ``formdb check --format json``, and one command
opens its library once, in one unit of work."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from formdb import api
from formdb.store.library import Library
from tests.helpers import run_formdb

README = Path(__file__).resolve().parents[2] / "README.md"
DEMO = Path(__file__).resolve().parents[2] / "seed_data" / "demo"


def _readme_example() -> str:
    found = re.search(r"## From Python.*?```python\n(.*?)```", README.read_text("utf-8"), re.S)
    assert found, "README.md must keep its 'From Python' example"
    return found.group(1)


def test_the_readme_python_example_runs_verbatim(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(tmp_path)
    exec(compile(_readme_example(), "README.md", "exec"), {})
    printed = capsys.readouterr().out
    assert printed.startswith("blend HLB ")
    assert (tmp_path / "larkspur.sqlite").exists()


def test_a_file_text_and_mapping_give_the_same_result(seeded_library_url: str) -> None:
    import tomllib

    path = DEMO / "01-hand-cream.toml"
    text = path.read_text("utf-8")
    with api.open_library(seeded_library_url) as library:
        by_file = api.check(library, path)
        by_text = api.check(library, text)
        by_mapping = api.check(library, tomllib.loads(text))
    assert by_file.findings == by_text.findings == by_mapping.findings
    assert by_file.facts == by_text.facts == by_mapping.facts


def test_api_check_returns_what_check_format_json_prints(seeded_sqlite_url: str) -> None:
    path = DEMO / "05-body-lotion-preserved.toml"
    done = run_formdb(["--db", seeded_sqlite_url, "check", str(path), "--format", "json"])
    assert done.exit_code in (0, 1), done.stderr
    printed = json.loads(done.stdout)
    printed = printed[0] if isinstance(printed, list) else printed
    with api.open_library(seeded_sqlite_url) as library:
        result = api.check(library, path)
    assert printed.pop("cautions")  # the report adds the cautions to the record
    assert json.loads(json.dumps(result.to_contract_json())) == printed


def test_bad_input_raises_a_located_formdb_error(seeded_sqlite_url: str) -> None:
    from formdb.errors import InvalidData

    with api.open_library(seeded_sqlite_url) as library, pytest.raises(InvalidData) as caught:
        api.check(library, {"name": "x", "category": "leave-on",
                            "ingredients": [{"inci": "Aqua", "percent": "lots", "phase": "A"}]})
    assert "percent" in str(caught.value)


def test_ingredients_list_and_show(seeded_sqlite_url: str) -> None:
    with api.open_library(seeded_sqlite_url) as library:
        emulsifiers = api.list_ingredients(library, role="emulsifier")
        shown = api.show_ingredient(library, "polysorbate 80")
    assert shown.inci_name == "Polysorbate 80"
    assert shown.inci_name in {r.inci_name for r in emulsifiers}
    assert shown.provenance["hlb"].source  # every value carries its source


def test_check_all_opens_the_library_once_in_one_unit(seeded_sqlite_url: str,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    stored = run_formdb(["--db", seeded_sqlite_url, "formula", "import",
                         *(str(p) for p in sorted(DEMO.glob("*.toml")))])
    assert stored.exit_code == 0, stored.stderr
    units: list[Library] = []
    real_unit = Library._unit

    def counted_unit(self: Library, *, write: bool):  # type: ignore[no-untyped-def]
        if self._session is None:
            units.append(self)
        return real_unit(self, write=write)

    monkeypatch.setattr(Library, "_unit", counted_unit)
    before = Library.opened
    for fmt in ("text", "json", "html"):
        done = run_formdb(["--db", seeded_sqlite_url, "check", str(DEMO / "01-hand-cream.toml"),
                           "--all", "--format", fmt])
        assert done.exit_code in (0, 1), done.stderr
    assert Library.opened - before == 3  # once per command
    assert len(units) == 3  # one outermost unit of work per command

