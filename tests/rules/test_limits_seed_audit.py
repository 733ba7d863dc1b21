"""LIM01 on the seed's hand-written rows alone (no export imported), against cases read in the
Commission's annex exports of 31/10/2025: the seed must not contradict the annex text where it
holds a row (Annex/ref named per test)."""

from __future__ import annotations

from formdb import api
from formdb.rules.limits import figure
from formdb.schemas.findings import Finding
from tests.libraries import opened


def _lim01(url: str, lines: list[tuple[str, float, str | None]], category: str,
           product: str) -> list[Finding]:
    body = [f'[[ingredients]]\ninci = "Aqua"\npercent = {100 - sum(p for _n, p, _u in lines)}']
    for name, percent, purpose in lines:
        said = f'\npurpose = "{purpose}"' if purpose else ""
        body.append(f'[[ingredients]]\ninci = "{name}"\npercent = {percent}{said}')
    text = (f'name = "Larkspur seed audit"\ncategory = "{category}"\nproduct = "{product}"\n\n'
            + "\n\n".join(body) + "\n")
    return [f for f in api.check(opened(url), text).findings if f.rule == "LIM01"]


def test_salicylic_acid_not_in_oral_products(seeded_sqlite_url: str) -> None:
    """III/98 and V/3 (Other: "Not to be used in oral products"): salicylic acid in a
    toothpaste, as an active or as a preservative, is an error on the seed rows too (it passed
    under III/98's 2 % "other products" and V/3's 0.5 %)."""
    for purpose, entry in (("active", "III/98"), ("preservative", "V/3")):
        found = _lim01(seeded_sqlite_url, [("Salicylic Acid", 0.2, purpose)], "rinse-off",
                       "toothpaste")
        assert [(f.severity.value, f.values["entry"]) for f in found] == [("error", entry)]


def test_titanium_dioxide_colouring_is_not_held_to_the_uv_filter_maximum(
        seeded_sqlite_url: str) -> None:
    """VI/27 (25 %) is for titanium dioxide as a UV filter; "For use as a colourant, see Annex
    IV, No 143", which sets no maximum. 30 % colouring a foundation was an error; 26 % as a UV
    filter still is."""
    assert _lim01(seeded_sqlite_url, [("Titanium Dioxide", 30.0, "colorant")], "leave-on",
                  "liquid foundation") == []
    [over] = _lim01(seeded_sqlite_url, [("Titanium Dioxide", 26.0, "uv filter")], "leave-on",
                    "sunscreen lotion")
    assert over.severity.value == "error" and over.values["entry"] == "VI/27"


def test_just_over_prints_the_digits_that_make_it_over(seeded_sqlite_url: str) -> None:
    """V/1 leave-on, 0.5 % (acid): 0.59 % sodium benzoate is 0.59 x 122.12 / 144.10 =
    0.5000056 % as benzoic acid (molar masses from the formulas)."""
    [over] = _lim01(seeded_sqlite_url, [("Sodium Benzoate", 0.59, "preservative")], "leave-on",
                    "body lotion")
    assert "0.59 % = 0.5000056 % as Benzoic Acid is over the 0.5 % limit" in over.message
    assert figure(0.508, 0.5, 3) == "0.508" and figure(0.45, 0.5, 3) == "0.45"
