"""The page's band (issue 11): the envelope on the temperature chart, the ranking chart, and the
band's line under the headline."""
import numpy as np
import pytest

from thermo_budget import report
from thermo_budget.planning.band_text import plan_phrase, pulls_phrase
from thermo_budget.page.page_bands import ranking_html
from thermo_budget.page.page_charts import envelope_png
from thermo_budget.planning.answers import simulate

from conftest import REPO


@pytest.fixture(scope="module")
def default_page():
    """The page on the default scenario, run once for the tests that only read it."""
    from streamlit.testing.v1 import AppTest
    at = AppTest.from_file(str(REPO / "app.py"), default_timeout=300).run()
    assert not at.exception
    return at


def test_the_envelope_chart_is_a_png_with_the_band_drawn(default_scenario, default_report):
    scenario, r = default_scenario, default_report
    text = scenario.to_toml()
    with_band = envelope_png(text, "SI", simulate(scenario), r["band_envelope"])
    without = envelope_png(text, "SI", simulate(scenario), None)
    assert with_band[:8] == b"\x89PNG\r\n\x1a\n" and with_band != without


def test_the_ranking_chart_has_a_bar_per_input_in_proportion_to_its_share(default_report):
    import re
    r = default_report
    rows = [(row["what"], row["share"]) for row in r["band_ranking"]]
    chart = ranking_html(rows, r["band_ranking"][0]["of"])
    widths = [float(w) for w in re.findall(r'style="width:([0-9.]+)%"', chart)]
    assert len(widths) == len(rows) and widths[0] == 80.0
    assert np.allclose(np.array(widths) / 80.0, [share / rows[0][1] for _, share in rows], atol=1e-3)
    for label, share in rows:
        assert label in chart and f"{100 * share:.0f} %" in chart
    assert "<script" not in ranking_html([("<script>x</script>", 0.5)])   # labels are escaped


def test_the_band_in_words(default_scenario):
    r = report(default_scenario)
    band = r.band.bands["runs_before_limit"]
    # the default's P90 is unbounded since the band's four new factors (issue 23): more than a tenth
    # of the samples never reach the limit
    upper = "or more" if band["p90"] is None else f"-{band['p90']}"
    assert pulls_phrase(r) == (f"{r.runs_before_limit} pulls before the limit (likely {band['p10']}"
                               f"{'' if band['p90'] is not None else ' '}{upper})")
    assert plan_phrase(r) == (f"plan {r.band.plan_at_confidence['runs_before_limit']} pulls to stay under 80.0 °C "
                              f"with 90 % confidence")
    off = report(default_scenario.changed(uncertainty={"enabled": False}))
    assert pulls_phrase(off) == f"{off.runs_before_limit} pulls before the limit"
    assert np.isfinite(r.band.confidence)


def test_the_page_shows_the_band_before_and_after_a_log_fit():
    """Upload the demo log and use the calibrated model: the page quotes both bands, and the one
    after the fit (carrying the fit's posterior) is the narrower."""
    import re
    from streamlit.testing.v1 import AppTest
    at = AppTest.from_file(str(REPO / "app.py"), default_timeout=300).run()
    log = (REPO / "scenarios" / "demo_log.csv").read_bytes()
    at.file_uploader(key="log_upload").set_value(("demo_log.csv", log, "text/csv")).run()
    at.toggle(key="use_calibrated").set_value(True).run()
    assert not at.exception
    line = next(m.value for m in at.markdown if "Before the log" in m.value)
    # "likely 30-55", or "likely 30 or more" where the band's upper end is unbounded
    (b10, b90), (a10, a90) = [(int(low), float(high) if high else float("inf"))
                              for low, high in re.findall(r"likely (\d+)(?:-(\d+)| or more)", line)]
    assert a90 - a10 < b90 - b10


def test_the_pull_count_band_is_shown_once(default_page, default_report):
    """The pull-count card carries the plan at the confidence and the band's median; the "How sure" line
    below it says what the range means and what to measure, without repeating them."""
    texts = [m.value for m in default_page.markdown]
    band = default_report["bands"]["runs_before_limit"]
    shown = f"at 90 % confidence · median {band['p50']}</div>"
    assert sum(shown in t for t in texts) == 1, [t[:80] for t in texts if shown in t]
    how_sure = next(t for t in texts if t.startswith("**How sure:**"))
    assert f"{band['p10']}-{band['p90']}" not in how_sure and f"{band['p10']} or more" not in how_sure
    assert "8 in 10" in how_sure


def test_the_table_of_bands_wraps_every_value_to_the_page(default_page, default_report):
    """The table of every answer's band and plan is a plain HTML table (it wraps to the page's width,
    so no value is cut off on a phone), one row per answer, its values those of the report."""
    table = next(m.value for m in default_page.markdown if "tb-bands" in m.value)
    r = default_report
    band = r["bands"]["runs_before_limit"]
    assert table.count("<tr>") == 1 + 6 and "<td>pulls in a row, cycle repeated</td>" in table
    assert f"<td>{band['p10']} to {band['p90'] or 'no limit'}</td>" in table    # None: unbounded
    assert f"<td>{r['plan_at_confidence']['runs_before_limit']}</td>" in table
