"""outputs/labels.py: the one map of output names and units, the number formats, the caution; memo blocks as JSON."""

from __future__ import annotations

import math

import pytest

from riskcalc.errors import InputError
from riskcalc.outputs import labels as lb
from riskcalc.outputs.memo import Block, Section, blocks_html, blocks_markdown, section_from_dict, section_to_dict


# Expected strings are written out by hand from each format's rule (its docstring), not computed.
@pytest.mark.parametrize(
    "fmt, value, expected",
    [
        (lb.fmt_num, 0.0087349, "0.00873"),  # three significant figures
        (lb.fmt_num, 1.1234e-05, "1.12e-05"),
        (lb.fmt_num, 12.345, "12.3"),
        (lb.fmt_num, None, "n/a"),
        (lb.fmt_num, math.nan, "n/a"),
        (lb.fmt_num, math.inf, "∞"),
        (lb.fmt_money, 1227087.4, "1,227,087"),  # whole units, thousands separators
        (lb.fmt_money, -20661875.2, "-20,661,875"),
        (lb.fmt_money, 12.34, "12.3"),  # below 100: three significant figures
        (lb.fmt_money, -math.inf, "−∞"),
        (lb.fmt_ratio, 11.614, "11.61"),  # two decimals
        (lb.fmt_ratio, 0.9, "0.90"),
        (lb.fmt_ratio, None, "n/a"),
        (lb.fmt_return_period, 0.0155, "65"),  # 1 / 0.0155 = 64.5: whole years
        (lb.fmt_return_period, 0.01, "100"),
        (lb.fmt_return_period, 1.23e-05, "81,300"),  # 81,301: three significant figures above 1,000
        (lb.fmt_return_period, 0.3, "3.3"),  # 3.33: two significant figures below 10
        (lb.fmt_return_period, 0.0, "n/a"),
        (lb.fmt_aep, 0.01, "1 %"),
        (lb.fmt_aep, 0.002, "0.2 %"),
        (lb.fmt_aep, 1e-05, "1e-05"),
        (lb.fmt_aep_axis, 0.01, "0.01"),
        (lb.fmt_aep_axis, 1e-04, "1e-4"),
        (lb.fmt_aep_axis, 2e-05, "2.0e-05"),
        (lb.fmt_quantity, 12345.6, "12,346"),  # discharge: like money
        (lb.fmt_quantity, 98.74, "98.7"),
    ],
)
def test_number_formats(fmt, value, expected):
    assert fmt(value) == expected


def test_percent_index_stage_and_kind_formats():
    assert lb.fmt_percent(0.537) == "54 %"
    assert lb.fmt_percent(0.04213, decimals=1) == "4.2 %"
    assert lb.fmt_percent(0.00012, sig=2) == "0.012 %"
    assert lb.fmt_index(0.613, 0.0449) == "0.61 ± 0.04"
    assert lb.fmt_index(0.2) == "0.20" and lb.fmt_index(None, 0.1) == "n/a"
    assert lb.fmt_quantity(216.9649, "stage") == "216.96"
    assert lb.fmt_value(1234.5, "money") == "1,234" and lb.fmt_value(1234.5, "lives") == "1.23e+03"


def test_output_labels_and_units():
    ead = lb.output_label("expected_annual_damage")
    assert ead.text("usd") == "Expected annual damage (EAD) [USD/yr]"
    assert ead.axis("eur") == "EAD [EUR/yr]"
    assert lb.output_label("ead") is ead  # the integrand name finds the same entry
    assert lb.output_label("all_incremental").key == "annualized_life_loss_incremental"
    afp = lb.output_label("annual_failure_probability")
    assert afp.text(unit=False) == "Annual failure probability (AFP)" and afp.fmt(0.00013) == "0.00013"
    mode = lb.output_label("afp_fm:internal erosion")
    assert mode.short == "AFP internal erosion" and mode.unit_text() == "1/yr" and mode.kind == "probability"
    with pytest.raises(KeyError):
        lb.output_label("annual_benefit")
    assert lb.unit_text("m3s") == "m³/s" and lb.unit_text("cfs") == "ft³/s" and lb.unit_text(None) == ""


def test_headline_keys_are_the_risk_runs_headlines():
    from riskcalc.risk.assess import HEADLINES

    assert [k for k, _, _ in HEADLINES] == list(lb.HEADLINE_KEYS)
    assert [lb.output_label(n).key for _, n, _ in HEADLINES] == list(lb.HEADLINE_KEYS)


def test_caution_says_what_the_project_rules_require():
    for text in (lb.CAUTION, lb.CAUTION_SHORT):
        assert "qualified, licensed engineers" in text
        assert "the governing agency's current policy and local codes decide" in text
        assert "only as good as the inputs" in text
    assert "never replace" in lb.CAUTION and "defaults from published guidance" in lb.CAUTION
    assert len(lb.CAUTION_SHORT) < len(lb.CAUTION)
    # plain text: Markdown and HTML renderers leave it as it is, so it can appear verbatim everywhere
    assert not set(lb.CAUTION) & set('\\`*_[]<>|#&"')
    assert lb.caution_line() == "Caution: " + lb.CAUTION


def test_section_survives_json_and_renders_escaped():
    sec = Section(
        "Alt <1>",
        "alt",
        (
            Block("p", "a *b* <i>"),
            Block("table", header=("x", "y [USD]"), rows=(("a|b", "1,234"),), css="t"),
            Block("list", items=("one", "two")),
            Block("figure", text="cap", figure="fig_a", number=3, image="AAAA"),
            Block("caution", lb.CAUTION),
        ),
    )
    back = section_from_dict(section_to_dict(sec))
    assert back.title == sec.title and back.anchor == "alt" and back.figures == ["fig_a"]
    assert back.blocks[:3] == sec.blocks[:3] and back.blocks[4] == sec.blocks[4]
    assert back.blocks[3].number == 0 and back.blocks[3].image == ""  # numbered when the memo is assembled
    md, page = blocks_markdown(back.blocks), blocks_html(back.blocks)
    assert r"a \*b\* \<i\>" in md and r"| a\|b | 1,234 |" in md and "y \\[USD\\]" in md
    assert "a *b* &lt;i&gt;" in page and '<td class="n">1,234</td>' in page and "<i>" not in page
    assert '<img src="figures/fig_a.png" alt="cap">' in page  # no image attached: a link, as in Markdown


def test_bad_section_files_are_input_errors(tmp_path):
    with pytest.raises(InputError, match="without blocks"):
        section_from_dict({"title": "old", "markdown": "text", "html": "<p>text</p>"}, tmp_path / "m.json")
    with pytest.raises(InputError, match="kind 'raw'"):
        section_from_dict({"title": "x", "blocks": [{"kind": "raw", "text": "<b>"}]})
    with pytest.raises(ValueError, match="unknown block kind"):
        Block("raw")
