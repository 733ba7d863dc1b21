"""The exposure table and toxicology records in the library: seeded, validated, used by a check.

Figures: SCCS Notes of Guidance, 12th revision, Table 3A (regulatory.md 2.2, found-secondary);
phenoxyethanol NOAEL 357 mg/kg bw/day from memory (seed_data/toxicology.csv says so).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from formdb.errors import InvalidData
from formdb.resources import seed_data_dir
from formdb.services.checking.flow import check_files
from formdb.services.seed.setup import init_library
from formdb.store.db import open_library, unit_of_work
from formdb.store.queries import load_reference_data
from tests.helpers import library_state
from tests.libraries import opened

TOX_HEADER = ("key,inci,pod_kind,pod_value,pod_unit,route,species,study,source,"
              "dermal_absorption_percent,dermal_absorption_source,oral_bioavailability_percent,"
              "oral_bioavailability_source,note\n")
EXPOSURE_HEADER = ("product,category,amount_g_day,amount_mg_kg_bw_day,retention_factor,"
                   "exposure_g_day,exposure_mg_kg_bw_day,source\n")


def _seed_dir(tmp_path: Path, **files: str) -> Path:
    folder = tmp_path / "seed"
    folder.mkdir()
    shutil.copyfile(seed_data_dir() / "sources.csv", folder / "sources.csv")
    for name, text in files.items():
        (folder / f"{name}.csv").write_text(text, encoding="utf-8")
    return folder


def test_the_bundled_library_holds_the_exposure_table_and_records(
        seeded_sqlite_url: str) -> None:
    engine = open_library(seeded_sqlite_url)
    try:
        with unit_of_work(engine) as session:
            reference = load_reference_data(session)
    finally:
        engine.dispose()
    assert len(reference.exposure) == 19  # 13 seen second-hand, 6 sun care and eye make-up recalled
    lotion = reference.exposure["body lotion"]
    assert (lotion.exposure_mg_kg_bw_day, lotion.retention_factor) == (123.20, 1.0)
    assert reference.exposure["hair conditioner"].amount_mg_kg_bw_day is None  # Table 3B: none
    tox = reference.toxicology["phenoxyethanol"]
    assert (tox.pod_kind, tox.pod_value, tox.pod_unit, tox.species) == (
        "NOAEL", 357.0, "mg/kg bw/day", "rat")
    assert tox.source == "from-memory"
    assert tox.dermal_absorption_percent is None  # no data: the default applies, flagged


@pytest.mark.parametrize(("files", "words"), [
    ({"exposure": EXPOSURE_HEADER + "body lotion,leave-on,7.82,123.20,,7.82,123.20,"
                                    "sccs-nog-12-table-3a\n"},
     "exposure.csv, row 2, column retention_factor: is empty; a value is required"),
    ({"exposure": EXPOSURE_HEADER + "body lotion,leave-on,7.82,123.20,1.0,7.82,12.32,"
                                    "sccs-nog-12-table-3a\n"},
     "column exposure_mg_kg_bw_day: 12.32 is not the amount 123.2 x retention factor 1"),
    ({"exposure": EXPOSURE_HEADER + "body lotion,leave-on,7.82,123.20,1.0,,,"
                                    "sccs-nog-12-table-3a\n"},
     "exposure_mg_kg_bw_day or exposure_g_day must be given"),
    ({"toxicology": TOX_HEADER + "p-noael,Phenoxyethanol,NOAEL,357,,oral,rat,study,"
                                 "from-memory,,,,,\n"},
     "toxicology.csv, row 2, column pod_unit: is empty"),
    ({"toxicology": TOX_HEADER + "p-noael,Phenoxyethanol,NOAEL,357,mg/kg,oral,rat,study,"
                                 "from-memory,,,,,\n"},
     "column pod_unit: 'mg/kg' is not a unit formdb reads; write mg/kg bw/day"),
    ({"toxicology": TOX_HEADER + "p-noael,Phenoxyethanol,NOAEL,357,mg/kg bw/day,oral,rat,"
                                 "study,from-memory,-5,from-memory,,,\n"},
     "column dermal_absorption_percent: Input should be greater than or equal to 0"),
    ({"toxicology": TOX_HEADER + "p-noael,Phenoxyethanol,NOAEL,357,mg/kg bw/day,oral,rat,"
                                 "study,from-memory,10,,,,\n"},
     "dermal_absorption_percent needs dermal_absorption_source"),
    ({"toxicology": TOX_HEADER + "p-noael,Larkspur Unknown Ester,NOAEL,357,mg/kg bw/day,oral,"
                                 "rat,study,from-memory,,,,,\n"},
     "column inci: 'Larkspur Unknown Ester' is not an ingredient in the library"),
])
def test_bad_safety_rows_are_refused_and_nothing_is_written(
        seeded_sqlite_url: str, tmp_path: Path, files: dict[str, str], words: str) -> None:
    before = library_state(seeded_sqlite_url)
    with pytest.raises(InvalidData) as caught:
        init_library(seeded_sqlite_url, seed=True, user="larkspur-test",
                     seed_dir=_seed_dir(tmp_path, **files))
    assert words in caught.value.message
    assert library_state(seeded_sqlite_url) == before


LOTION = '''name = "Larkspur LB-S01 body lotion"
category = "leave-on"
product = "Body Lotion"

[[ingredients]]
inci = "Aqua"
percent = 94.0

[[ingredients]]
inci = "Glycerin"
percent = 5.0

[[ingredients]]
inci = "Phenoxyethanol"
percent = 1.0
'''


def test_a_check_shows_the_arithmetic_and_flags_the_defaults(seeded_sqlite_url: str,
                                                            tmp_path: Path) -> None:
    path = tmp_path / "lotion.toml"
    path.write_text(LOTION, encoding="utf-8")
    [result] = check_files(opened(seeded_sqlite_url), [path], "strict")
    sheet = result.to_contract_json()["facts"]["exposure"]
    assert sheet["product"] == "body lotion" and sheet["exposure_mg_kg_bw_day"] == 123.2
    [line] = sheet["lines"]
    # SCCS NoG formula, by hand: SED = 123.20 x 1/100 x 50/100 = 0.616; the strict profile's
    # oral bioavailability 50 %: PoD_sys = 178.5; MoS = 178.5 / 0.616 = 289.8
    assert line["sed_mg_kg_bw_day"] == 0.616
    assert line["pod_sys_mg_kg_bw_day"] == 178.5
    assert line["mos"] == pytest.approx(289.8, abs=0.05)
    assert line["dermal_absorption_default"] and line["oral_bioavailability_default"]
    assert "SED = E_product x C/100 x DAp/100 = 123.2 x 1/100 x 50/100 = 0.616 mg/kg bw/day" \
        in line["steps"]
    assert any("dermal absorption 50 %" in d for d in sheet["defaults_used"])
    infos = [f for f in result.findings if f.rule == "MOS01"]
    assert [f.severity.value for f in infos] == ["info"]  # passes; the defaults are named


def test_the_text_and_html_reports_show_the_sheet(seeded_sqlite_url: str,
                                                  tmp_path: Path) -> None:
    from formdb.report.html import render_html
    from formdb.report.text import render_text

    path = tmp_path / "lotion.toml"
    path.write_text(LOTION.replace("Larkspur LB-S01", "Larkspur <b>LB-S01</b>"),
                    encoding="utf-8")
    [result] = check_files(opened(seeded_sqlite_url), [path], "default")
    text = render_text([result])
    assert "EXPOSURE AND MARGIN OF SAFETY" in text
    # PoD_sys = 357 x 50/100 = 178.5 (the SCCS NoG default oral bioavailability without data,
    # 50 %; regulatory.md section 2.1, from memory); MoS = 178.5 / 0.616 = 289.8
    assert "MoS = PoD_sys / SED = 178.5 / 0.616 = 289.8: at least 100" in text
    assert "Defaults used" in text
    page = render_html([result])
    assert "Exposure and margin of safety" in page
    assert "178.5 / 0.616 = 289.8" in page
    assert "<b>LB-S01</b>" not in page and "&lt;b&gt;LB-S01&lt;/b&gt;" in page


WASH = '''name = "Larkspur LB-S02 shower gel"
category = "rinse-off"

[[ingredients]]
inci = "Aqua"
percent = 89.96

[[ingredients]]
inci = "Sodium Laureth Sulfate"
percent = 10.0

[[ingredients]]
inci = "Limonene"
percent = 0.03

[[ingredients]]
inci = "Linalool"
percent = 0.005

[[ingredients]]
inci = "Linalool"
percent = 0.005
'''


def test_allergens_are_summed_and_listed_for_the_label(seeded_sqlite_url: str,
                                                       tmp_path: Path) -> None:
    """Rinse-off threshold 0.01 % (Reg. (EC) No 1223/2009 Annex III, regulatory.md 1.3):
    Limonene 0.03 % is above; Linalool 0.005 + 0.005 = 0.01 % is not above."""
    from formdb.report.text import render_text

    path = tmp_path / "wash.toml"
    path.write_text(WASH, encoding="utf-8")
    [result] = check_files(opened(seeded_sqlite_url), [path], "default")
    table = result.facts.allergens
    assert table is not None and table.threshold_percent == 0.01
    assert table.source == "reg-1223-2009-annex-iii-allergens"
    totals = {line.inci: line.percent for line in table.lines}
    assert totals == {"Limonene": pytest.approx(0.03), "Linalool": pytest.approx(0.01)}
    assert table.must_label == ("Limonene",)
    [finding] = [f for f in result.findings if f.rule == "ALG01"]
    assert finding.ingredients == ("Limonene",)
    assert "FRAGRANCE ALLERGENS" in render_text([result])


def test_a_bad_label_threshold_row_is_refused(seeded_sqlite_url: str, tmp_path: Path) -> None:
    before = library_state(seeded_sqlite_url)
    text = ("key,jurisdiction,list_name,entry,role,category,threshold_percent,label_rule,"
            "source,list_date\n"
            "x,EU,Annex III,III/45,alergen,leave-on,0.001,name it,"
            "reg-1223-2009-annex-iii-allergens,2009-11-30\n")
    with pytest.raises(InvalidData) as caught:
        init_library(seeded_sqlite_url, seed=True, user="larkspur-test",
                     seed_dir=_seed_dir(tmp_path, label_thresholds=text))
    assert "label_thresholds.csv, row 2, column role" in caught.value.message
    assert library_state(seeded_sqlite_url) == before


def _demo_sources(folder: Path) -> None:
    with open(folder / "sources.csv", "a", encoding="utf-8") as handle:
        handle.write("larkspur-demo,Larkspur Bench Laboratories demo allergen certificate "
                     "(invented demo data),supplier,,,for tests and the demo only\n")


CREAM = '''name = "Larkspur LB-S04 face cream"
category = "leave-on"
product = "face cream"

[[ingredients]]
inci = "Aqua"
percent = 94.5

[[ingredients]]
inci = "Glycerin"
percent = 5.0

[[ingredients]]
inci = "Fragrance"
percent = 0.5
'''


def test_a_mixture_is_exploded_into_its_constituents(seeded_sqlite_url: str,
                                                      tmp_path: Path) -> None:
    folder = _seed_dir(tmp_path, constituents="mixture_inci,constituent_inci,percent,source\n"
                       "Parfum,Limonene,2,larkspur-demo\nParfum,Linalool,0.1,larkspur-demo\n")
    _demo_sources(folder)
    init_library(seeded_sqlite_url, seed=True, user="larkspur-test", seed_dir=folder)
    path = tmp_path / "cream.toml"
    path.write_text(CREAM, encoding="utf-8")
    [result] = check_files(opened(seeded_sqlite_url), [path], "default")
    shares = {s.inci: s.percent for s in result.facts.substances}
    # 0.5 % Parfum: Limonene 0.5 x 2/100 = 0.01 %, Linalool 0.5 x 0.1/100 = 0.0005 %,
    # undeclared Parfum 0.5 x 97.9/100 = 0.4895 %
    assert shares == {"Aqua": pytest.approx(94.5), "Glycerin": pytest.approx(5.0),
                      "Parfum": pytest.approx(0.4895), "Limonene": pytest.approx(0.01),
                      "Linalool": pytest.approx(0.0005)}
    assert result.facts.allergens is not None
    assert result.facts.allergens.must_label == ("Limonene",)  # 0.01 > 0.001; 0.0005 is not


@pytest.mark.parametrize(("rows", "words"), [
    ("Parfum,Limonene,80,larkspur-demo\nParfum,Linalool,30,larkspur-demo\n",
     "the constituents of Parfum add up to 110 %, more than 100 %"),
    ("Parfum,Parfum,10,larkspur-demo\n", "a mixture cannot contain itself"),
    ("Parfum,Larkspur Unknown Ester,10,larkspur-demo\n",
     "'Larkspur Unknown Ester' is not an ingredient in the library"),
    ("Parfum,Limonene,-2,larkspur-demo\n", "column percent: Input should be greater than 0"),
])
def test_bad_constituents_are_refused(seeded_sqlite_url: str, tmp_path: Path, rows: str,
                                      words: str) -> None:
    folder = _seed_dir(tmp_path, constituents="mixture_inci,constituent_inci,percent,source\n"
                       + rows)
    _demo_sources(folder)
    before = library_state(seeded_sqlite_url)
    with pytest.raises(InvalidData) as caught:
        init_library(seeded_sqlite_url, seed=True, user="larkspur-test", seed_dir=folder)
    assert words in caught.value.message
    assert library_state(seeded_sqlite_url) == before
