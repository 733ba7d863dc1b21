"""LIM01 on the seed's hand-written rows (no export imported): rows bound to preservative use
(Annex V) or to other uses ("for purposes other than inhibiting the development of
micro-organisms", Annex III/98 salicylic acid, Reg. (EU) 2019/1966; III/286 cetrimonium chloride,
Reg. (EU) No 866/2014) apply by the line's purpose."""

from __future__ import annotations

from formdb import api
from formdb.schemas.findings import Finding
from tests.libraries import opened


def _lim01(url: str, purpose: str | None, percent: float = 1.5) -> list[Finding]:
    said = f'\npurpose = "{purpose}"' if purpose else ""
    text = (f'name = "Larkspur clarifying cream"\ncategory = "leave-on"\nproduct = "face cream"\n\n'
            f'[[ingredients]]\ninci = "Aqua"\npercent = {100 - percent}\n\n'
            f'[[ingredients]]\ninci = "Salicylic Acid"\npercent = {percent}{said}\n')
    return [f for f in api.check(opened(url), text).findings if f.rule == "LIM01"]


def test_keratolytic_use_is_judged_by_iii_98(seeded_sqlite_url: str) -> None:
    """1.5 % salicylic acid as an active in a face cream: III/98 'other products' 2.0 % holds;
    the preservative entry V/3 (0.5 %) does not apply."""
    assert _lim01(seeded_sqlite_url, "active") == []


def test_preservative_use_is_judged_by_v_3(seeded_sqlite_url: str) -> None:
    [finding] = _lim01(seeded_sqlite_url, "preservative")
    assert finding.severity.value == "error" and finding.values["entry"] == "V/3"


def test_undeclared_purpose_names_the_reading(seeded_sqlite_url: str) -> None:
    [finding] = _lim01(seeded_sqlite_url, None)
    assert finding.severity.value == "warning"
    assert finding.message.startswith("if used as a preservative:")
    assert "purpose" in (finding.advice or "")


def test_cetrimonium_chloride_in_body_lotion_on_the_seed(seeded_sqlite_url: str) -> None:
    """III/286 (Reg. (EU) No 866/2014) does not cover body lotion: 1 % conditioning use is not
    allowed. The seed holds no preservative row for it (Annex V/44 is not seeded), so with no
    purpose declared the one kind of row that names it applies; declared a preservative, the
    row does not apply."""
    def lim01(purpose: str | None) -> list[Finding]:
        said = f'\npurpose = "{purpose}"' if purpose else ""
        text = ('name = "Larkspur conditioning lotion"\ncategory = "leave-on"\n'
                'product = "body lotion"\n\n[[ingredients]]\ninci = "Aqua"\npercent = 99.0\n\n'
                f'[[ingredients]]\ninci = "Cetrimonium Chloride"\npercent = 1.0{said}\n')
        return [f for f in api.check(opened(seeded_sqlite_url), text).findings
                if f.rule == "LIM01" and f.values["entry"] == "III/286"]
    [declared] = lim01("conditioning")
    assert declared.severity.value == "error" and "not allowed in body lotion" in declared.message
    [unsaid] = lim01(None)
    assert unsaid.severity.value == "error"
    assert lim01("preservative") == []


def test_over_both_readings_stays_an_error(seeded_sqlite_url: str) -> None:
    """0.6 % salicylic acid in a lipstick, purpose not said: over V/3 (0.5 % as a preservative)
    and over III/98 (c) (0.5 % in lipstick for other uses, which includes any preservative use),
    per ../shared/references/regulatory.md (V/3 found-P; III/98 found-S, as replaced by
    Reg. (EU) 2019/1966). Whichever the purpose, the product is over a limit: an error, not a
    reading to choose."""
    text = ('name = "Larkspur tinted lip balm"\ncategory = "leave-on"\nproduct = "lipstick"\n\n'
            '[[ingredients]]\ninci = "Aqua"\npercent = 99.4\n\n'
            '[[ingredients]]\ninci = "Salicylic Acid"\npercent = 0.6\n')
    found = [f for f in api.check(opened(seeded_sqlite_url), text).findings if f.rule == "LIM01"]
    assert sorted(f.values["entry"] for f in found) == ["III/98", "V/3"]
    assert all(f.severity.value == "error" for f in found)
    assert all(f.message.startswith("whether used as a preservative or not:") for f in found)


def test_over_one_reading_only_stays_a_warning(seeded_sqlite_url: str) -> None:
    """1.5 % in a face cream, purpose not said: over V/3 (0.5 %) only; III/98 (b) allows 2.0 %
    for other uses. Which limit applies depends on the purpose: a warning naming the reading."""
    [finding] = _lim01(seeded_sqlite_url, None)
    assert finding.severity.value == "warning"


def test_a_declared_preservative_line_keeps_its_purpose_beside_an_unsaid_one(
        seeded_sqlite_url: str) -> None:
    """Salicylic acid 1.0 % declared a preservative in the water phase and 0.2 % with no purpose
    post-added, in a face cream: the lines are totalled (1.2 %), and the declared use is the
    reading, so V/3 (0.5 % as a preservative) is an error, as the declared line alone already
    was; not an 'if used as a preservative' warning because the second line says nothing."""
    text = ('name = "Larkspur clarifying cream"\ncategory = "leave-on"\nproduct = "face cream"\n\n'
            '[[ingredients]]\ninci = "Aqua"\npercent = 98.8\n\n'
            '[[ingredients]]\ninci = "Salicylic Acid"\npercent = 1.0\n'
            'purpose = "preservative"\n\n'
            '[[ingredients]]\ninci = "Salicylic Acid"\npercent = 0.2\n')
    found = [f for f in api.check(opened(seeded_sqlite_url), text).findings
             if f.rule == "LIM01" and f.values.get("entry") == "V/3"]
    assert [f.severity.value for f in found] == ["error"]
