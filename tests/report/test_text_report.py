"""The text report: plain when not a terminal, 100 columns, units on the numbers, no reprs."""

from __future__ import annotations

import re

import pytest

from formdb.errors import ConfigError
from formdb.report import FORMATS, RENDERERS, render
from formdb.rules.engine import check_resolved
from formdb.rules.profiles import Profile
from formdb.schemas.vocab import Role, Severity
from tests.report.factory import finding, result
from tests.rules.library import formula, reference

ANSI = re.compile(r"\x1b\[")


def test_dispatch_table_has_the_three_formats() -> None:
    assert set(RENDERERS) == set(FORMATS) == {"text", "json", "html"}
    with pytest.raises(ConfigError, match="unknown report format"):
        render([result()], "pdf")


def test_plain_text_has_no_colour_codes_and_fits_100_columns() -> None:
    text = render([result(intended_type="O/W", findings=(finding(),))], "text")
    assert not ANSI.search(text)
    assert max(len(line) for line in text.splitlines()) <= 100


def test_colour_only_when_asked() -> None:
    checked = result(findings=(finding(severity=Severity.ERROR),))
    assert ANSI.search(render([checked], "text", color=True))


def test_markup_in_user_strings_is_printed_as_written() -> None:
    text = render([result(name="Lotion [bold]draft[/bold] [red]2", findings=(
        finding(message="see [link=x]here[/link]"),))], "text")
    assert "Lotion [bold]draft[/bold] [red]2" in text
    assert "see [link=x]here[/link]" in text


def test_numbers_carry_units_and_no_python_reprs_leak() -> None:
    text = render([result(intended_type="O/W", ph=5.5)], "text")
    for unit in ("% w/w", "g/mL", "mL", "µm", "m²", "mg/m²", "kg/m³", "mPa·s", "mm/day"):
        assert unit in text, unit
    for leak in ("None", "EmulsionType", "Severity.", "True", "False", "{'", "()"):
        assert leak not in text, leak


def test_sections_come_in_reading_order_and_findings_by_severity() -> None:
    checked = result(intended_type="O/W", findings=(
        finding("I9", Severity.INFO, "note"), finding("E9", Severity.ERROR, "error"),
        finding("W9", Severity.WARNING, "warning")))
    text = render([checked], "text")
    order = ["PHASES", "HLB BALANCE", "EMULSION TYPE", "DISPERSED PHASE",
             "INTERFACE AND CREAMING", "DATA GAPS", "FINDINGS", "Cautions"]
    positions = [text.index(title) for title in order]
    assert positions == sorted(positions)
    assert text.index("Errors (1)") < text.index("Warnings (1)") < text.index("Information (1)")


def test_the_published_blend_and_its_ratio_are_shown() -> None:
    # 1.5 % sorbitan oleate (4.3) and 3.5 % polysorbate 80 (15.0) = 30/70 -> HLB 11.79
    # (PMC4137601 Table 2); required HLB 11.5 of isopropyl myristate (OCL 2022 Table 4); the
    # lever rule gives x = (11.5 - 15.0) / (4.3 - 15.0) = 0.327 of sorbitan oleate.
    text = render([result(intended_type="O/W")], "text")
    assert "Blend HLB          11.79" in text
    assert "32.7 %" in text and "1.64" in text and "3.36" in text
    assert "inside the band" in text


# stearic acid and sodium hydroxide with the molar masses and stoichiometry the soap needs
_SOAP_PAIR = {
    "Stearic Acid": {"roles": {Role.FATTY_ACID, Role.EMULSIFIER}, "props": {
        "solubility": "oil", "density": 0.94, "molar_mass": 284.48, "required_hlb_ow": 15}},
    "Sodium Hydroxide": {"roles": {Role.PH_ADJUSTER}, "props": {
        "solubility": "water", "density": 2.13, "molar_mass": 39.997,
        "base_equivalents": 1, "cation_valence": 1, "neutralisation_water": 1}},
}


def test_soap_formed_in_place_is_marked() -> None:
    text = render([result(lines=[("Water", 84.0), ("Stearic Acid", 15.0),
                                 ("Sodium Hydroxide", 1.0)], extra=_SOAP_PAIR,
                          intended_type="O/W")], "text")
    flat = " ".join(text.split())
    assert "Soap formed in the batch" in flat and "Left over" in flat
    # stoichiometry: 1.00 g NaOH (39.997 g/mol) neutralises 1.00 / 39.997 mol of stearic acid
    # (284.48 g/mol) = 7.11 g and frees 1.00 / 39.997 x 18.015 = 0.45 g of water
    assert "Stearic Acid 7.11 % w/w" in flat and "water formed 0.45 % w/w" in flat
    assert "Stearic Acid 7.89 % w/w" in flat  # 15.00 - 7.11 left over


def test_several_formulas_then_the_cautions_once() -> None:
    text = render([result(name="First"), result(name="Second")], "text")
    assert text.index("First") < text.index("Second") < text.index("Cautions")
    assert text.count("Cautions") == 1


def test_a_soap_in_a_kind_without_the_hlb_balance_is_worked_out_in_the_phases() -> None:
    # a liquid soap stated as a surfactant solution: no HLB balance section, so the phases note
    # must not send the reader there; the soap's working (same stoichiometry as above) is shown
    text = render([result(lines=[("Water", 84.0), ("Stearic Acid", 15.0),
                                 ("Sodium Hydroxide", 1.0)], extra=_SOAP_PAIR,
                          kind="surfactant solution")], "text")
    flat = " ".join(text.split())
    assert "HLB BALANCE" not in text and "see the HLB balance" not in flat
    assert "after soap forms in the batch (worked out below)" in flat
    assert "Soap formed in the batch" in flat and "Stearic Acid 7.89 % w/w" in flat


def test_the_hld_is_read_at_both_temperatures_and_as_the_third_type_indicator() -> None:
    # HLD by hand with science.md section 6's memory constants (as tests/rules/cases/HLD01.toml):
    # hexadecane EACN 16 (definition), a hypothetical Cc -0.2 for the ethoxylate:
    # 25 °C: -0.17 x 16 - 0.2 = -2.92 (O/W); 85 °C: -2.92 + 0.06 x 60 = +0.68 (W/O);
    # PIT = 25 + 2.92 / 0.06 = 73.7 °C, crossed on cooling
    extra = {
        "Hexadecane": {"roles": {Role.OIL}, "props": {"solubility": "oil", "eacn": 16,
                                                      "density": 0.77}},
        "Laureth-4": {"roles": {Role.EMULSIFIER}, "props": {
            "solubility": "water", "ionic_character": "nonionic", "hlb": 9.7, "hld_cc": -0.2,
            "ethoxylated": True}},
    }
    text = render([result(lines=[("Water", 75.0), ("Hexadecane", 20.0), ("Laureth-4", 5.0)],
                          extra=extra, intended_type="O/W",
                          process={"temperature_c": 85})], "text")
    flat = " ".join(text.split())
    assert "+0.68 (W/O) at 85 °C, -2.92 (O/W) at 25 °C" in flat
    assert "By HLD O/W: HLD -2.92 at 25 °C; +0.68 at the 85 °C of making; phase inversion " \
           "about 74 °C, crossed on cooling" in flat
    assert "the indicators agree" in flat


def test_against_intended_is_as_strong_as_the_type_rule_found_it() -> None:
    """The Emulsion type section's 'Against intended' line follows TYP01: a problem on strong
    evidence (sorbitan oleate alone, HLB 4.3 below 6 for an intended O/W; Griffin 1949 classes),
    a check on weaker (sorbitan laurate, HLB 8.6, for an intended W/O: O/W class but below 10)."""
    def against(lines: list[tuple[str, float]], intended: str) -> str:
        checked = check_resolved(formula("type", lines, intended_type=intended), reference(),
                                 Profile(name="t", version="0", select=("TYP01",)))
        text = render([checked], "text")
        return next(line for line in text.splitlines() if "Against intended" in line)

    strong = against([("Water", 75.0), ("Paraffinum Liquidum", 20.0), ("Sorbitan Oleate", 5.0)],
                     "O/W")
    assert "gives W/O" in strong and "[problem]" in strong and "not decisive" not in strong
    weak = against([("Water", 40.0), ("Paraffinum Liquidum", 55.0), ("Sorbitan Laurate", 5.0)],
                   "W/O")
    assert "gives O/W (not decisive)" in weak and "[check]" in weak
