"""A supplier blend entered by its name only is said to be checked as one ingredient (MIX01),
and the command its advice gives makes the limits apply to its members: phenoxyethanol 1.0 %
is Annex V/29's maximum for all products (the seed's row, SCCS/1575/16), so 1.2 % of a 90:10
blend with ethylhexylglycerin (invented proportions of the demo lab) is 1.08 %, over it."""

from __future__ import annotations

import shlex
from pathlib import Path

import pytest

from tests.helpers import check_findings, run_formdb

BLEND = "Phenoxyethanol (and) Ethylhexylglycerin"
FORMULA = f"""name = "Larkspur preserved lotion, draft 4"
category = "leave-on"
[[ingredients]]
inci = "Water"
percent = 93.8
[[ingredients]]
inci = "Glycerin"
percent = 5.0
[[ingredients]]
inci = "{BLEND}"
percent = 1.2
"""


@pytest.mark.slow
def test_a_blend_without_constituents_is_said_and_declaring_them_checks_the_members(
        seeded_sqlite_url: str, tmp_path: Path) -> None:
    url = seeded_sqlite_url
    added = run_formdb(["--db", url, "ingredient", "add", BLEND, "--role", "preservative",
                        "--reason", "supplier blend received"])
    assert added.exit_code == 0, added.stderr
    formula = tmp_path / "lotion.toml"
    formula.write_text(FORMULA, encoding="utf-8")
    before = check_findings(url, formula)
    (mix,) = [f for f in before if f["rule"] == "MIX01"]
    assert mix["severity"] == "warning" and mix["ingredients"] == [BLEND]
    assert "constituents were not checked" in str(mix["message"])
    assert not [f for f in before if f["rule"] == "LIM01"]  # the member's limit went unseen
    # the advice's command, run as written (shell-quoted), with the supplier's figures filled in
    command = str(mix["advice"]).split("formdb ", 1)[1].split(" (the percentages", 1)[0]
    words = [w.replace("Phenoxyethanol=PERCENT", "Phenoxyethanol=90")
              .replace("Ethylhexylglycerin=PERCENT", "Ethylhexylglycerin=10")
              .replace("SOURCE", "rule-of-thumb") for w in shlex.split(command)]
    assert words[:3] == ["mixture", "set", BLEND]
    declared = run_formdb(["--db", url, *words, "--reason", "supplier specification"])
    assert declared.exit_code == 0, declared.stderr
    after = check_findings(url, formula)
    assert not [f for f in after if f["rule"] == "MIX01"]
    (limit,) = [f for f in after if f["rule"] == "LIM01"]
    assert "Phenoxyethanol" in limit["ingredients"] and limit["severity"] == "error"
