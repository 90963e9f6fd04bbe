"""The report's start page and table pages, without Snakemake: content, escaping, rendering."""

import docutils.core
import jinja2
import pandas as pd
from report_browser import ReportView, problems

from spikevar.cohort.report_pages import start_page, table_page, with_interval


def _tables(groups=("ctl_*a", "b|x")):
    units = pd.DataFrame({"session": ["s1", "s1", "s2", "s3"], "subject": ["m1", "m1", "m2", "m3"],
                          "group": [groups[0], groups[0], groups[1], groups[1]],
                          "unit": ["1", "2", "1", "1"]})
    rows = []
    for g, mean in zip(groups, (1.0, 1.5), strict=True):
        rows.append({"metric": "isi_cv", "metric_label": "ISI CV", "alignment": "",
                     "condition": "", "epoch": "", "group": g, "mean": mean,
                     "mean_ci_lo": mean - 0.1, "mean_ci_hi": mean + 0.1})
        for epoch, r in (("baseline", 0.2), ("response", 0.01)):
            rows.append({"metric": "mean_r_sc", "metric_label": "", "alignment": "time",
                         "condition": "bright", "epoch": epoch, "group": g, "mean": r,
                         "mean_ci_lo": r - 0.05, "mean_ci_hi": r + 0.05})
    summary = pd.DataFrame(rows)
    differences = pd.DataFrame([
        {"metric": "isi_cv", "alignment": "", "condition": "", "epoch": "",
         "group_a": groups[0], "group_b": groups[1], "diff_mean": -0.5, "diff_mean_ci_lo": -0.7,
         "diff_mean_ci_hi": -0.3, "p_permutation": 0.1, "p_permutation_min": 0.1,
         "few_subjects": True}])
    return units, summary, differences


def test_start_page_renders_with_the_cohort_and_the_results():
    units, summary, differences = _tables()
    rst = start_page(units=units, summary=summary, differences=differences,
                     sessions=["s1", "s2", "s3", "s4"], alignment="time",
                     categories=["Group statistics", "Quality control"])
    # what Snakemake does with it: Jinja2, then docutils to HTML
    text = jinja2.Environment().from_string(rst).render()
    html = docutils.core.publish_parts(text, writer_name="html")["html_body"]
    assert "System Message" not in html and "ERROR" not in html
    assert "4 sessions, 3 subjects, 2 groups, 4 units" in html
    assert "Sessions without results: s4" in html
    assert "ctl_*a" in html and "b|x" in html  # markup characters escaped, shown as written
    assert with_interval(1.0, 0.9, 1.1) in html and "0.1 min" in html
    assert "r_sc, baseline" in html and "r_sc, response" in html
    assert "Quality control" in html and "Recovery fits by session" not in html


def test_table_page_holds_every_row_and_explains_columns():
    _, summary, _ = _tables()
    page = table_page(summary, table="group_summary", title="Group summary", note="n")
    assert page.count("<tr>") == len(summary) + 1
    assert 'title="' in page and "&lt;" not in page.split("<table>")[0]


def test_browser_problems_name_what_is_broken():
    view = ReportView(start_text="nothing", screenshot=None, results=[
        {"path": "figures/a.png", "kind": "image/png", "shown": True, "width": 0, "height": 0},
        {"path": "report/t.html", "kind": "text/html", "shown": True, "has_table": False}])
    found = problems(view)
    assert len(found) == 3
    assert any("figures/a.png" in p for p in found) and any("t.html" in p for p in found)
