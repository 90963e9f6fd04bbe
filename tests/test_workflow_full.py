"""The whole pipeline through Snakemake on a tiny cohort: tables written, read back, figures."""

import os
import shutil
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest

from conftest import run_snakemake
from spikevar.base.layout import COHORT_DATASETS, COHORT_FIGURES
from spikevar.base.parquet_io import sha256_of_file
from spikevar.cohort.report_pages import with_interval

pytestmark = pytest.mark.workflow


@pytest.fixture(scope="module")
def full_run(tiny_cohort, tmp_path_factory):
    work = tmp_path_factory.mktemp("full")
    cohort = work / "cohort"
    shutil.copytree(tiny_cohort.parent, cohort)
    sheet = pd.read_csv(cohort / "sessions.tsv", sep="\t", dtype=str, keep_default_na=False)
    sheet.loc[1, "events"] = ""  # one session without events
    sheet.to_csv(cohort / "sessions.tsv", sep="\t", index=False)
    proc = run_snakemake(work, "--config", f"sessions={cohort / 'sessions.tsv'}", "results=out")
    return work / "out", sheet, proc


def test_metric_tables_per_session(full_run):
    out, sheet, _ = full_run
    no_events = sheet.loc[1, "session"]
    for session in sheet["session"]:
        folder = out / "sessions" / session
        units = pq.read_table(folder / "units.parquet").to_pandas()
        for column in ("session", "unit", "n_spikes", "duration_s", "rate_hz", "isi_cv",
                       "isi_cv2", "isi_lv", "isi_lvr", "refractory_violation_fraction"):
            assert column in units.columns
        assert (units["session"] == session).all()
        assert len(units) == 3
        counts = pq.read_table(folder / "count_fano.parquet").to_pandas()
        assert sorted(counts["window_s"].unique()) == [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0]
        assert {"fano", "fano_lo", "fano_hi", "n_windows"} <= set(counts.columns)
        timecourse = pq.read_table(folder / "fano_timecourse.parquet")
        assert {"condition", "time_s", "n_trials", "mean_count", "var_count", "fano"} <= \
            set(timecourse.schema.names)
        if session == no_events:
            assert timecourse.num_rows == 0
        else:
            assert timecourse.num_rows == 3 * 2 * 57


def test_recovery_table_and_figures(full_run):
    out, sheet, _ = full_run
    for session in sheet["session"]:
        rec = pq.read_table(out / "sessions" / session / "recovery.parquet").to_pandas()
        for column in ("unit", "model", "asymptotic_rate_hz", "recovery_tau_s", "dead_time_s",
                       "tau_ci_lo", "tau_ci_hi", "log_likelihood", "aic", "ks_stat",
                       "ks_pvalue", "n_intervals", "converged", "preferred"):
            assert column in rec.columns
        assert set(rec["model"]) == {"poisson", "dead_time", "exp_recovery"}
        assert (rec.groupby("unit")["preferred"].sum() == 1).all()
        # the figure's KS labels are the table's ks_stat (one goodness of fit, computed once)
        svg = (out / "figures" / "sessions" / f"{session}_recovery.svg").read_text()
        first = rec[(rec["unit"] == rec["unit"].iloc[0]) & (rec["fit_kind"] == "stationary")]
        for ks in first["ks_stat"].dropna():
            assert f"KS {ks:.3f}" in svg
        png = out / "figures" / "sessions" / f"{session}_recovery.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert png.stat().st_size > 20_000
        assert png.with_suffix(".svg").exists()


def test_cohort_tables_with_metadata_and_csv(full_run):
    out, sheet, _ = full_run
    units = pq.read_table(out / "cohort" / "units.parquet").to_pandas()
    assert list(units.columns[:5]) == ["session", "subject", "group", "probe_depth_um",
                                       "data_origin"]
    assert set(units["session"]) == set(sheet["session"])
    assert set(units["group"]) == {"standard", "enriched"}
    csv = pd.read_csv(out / "cohort" / "units.csv")
    assert len(csv) == len(units)
    for table in ("count_fano", "recovery", "population_fano", "group_summary",
                  "group_differences", "failed_sessions", "shared_variance",
                  "population_structure", "gain_variance", "shared_over_time", "r_sc_by_rate"):
        assert (out / "cohort" / f"{table}.parquet").exists()
    # tables that grow with pairs or windows are datasets: one file per session, read as one
    for dataset in ("fano_timecourse", "pair_correlations", "shared_timecourse"):
        folder = out / "cohort" / dataset
        assert sorted(p.stem for p in folder.glob("*.parquet")) == sorted(sheet["session"])
        table = pq.read_table(folder)
        assert table.schema.names[:3] == ["session", "subject", "group"]
        assert set(table.column("session").to_pylist()) <= set(sheet["session"])
    assert pq.read_table(out / "cohort" / "failed_sessions.parquet").num_rows == 0
    summary = pq.read_table(out / "cohort" / "group_summary.parquet").to_pandas()
    assert {"rate_hz", "isi_cv", "recovery_tau_s"} <= set(summary["metric"])
    # the shared metrics are summarised per alignment x condition x epoch
    shared = summary[summary["metric"] == "mean_r_sc"]
    assert set(shared["epoch"]) == {"baseline", "response"}
    assert (shared["alignment"] == "time").all()
    assert set(summary.loc[summary["metric"] == "rate_hz", "epoch"]) == {""}


def test_shared_variability_tables(full_run):
    out, sheet, _ = full_run
    no_events = sheet.loc[1, "session"]
    for session in sheet["session"]:
        folder = out / "sessions" / session
        pairs = pq.read_table(folder / "pair_correlations.parquet").to_pandas()
        structure = pq.read_table(folder / "population_structure.parquet").to_pandas()
        shared = pq.read_table(folder / "shared_variance.parquet").to_pandas()
        gain = pq.read_table(folder / "gain_variance.parquet").to_pandas()
        over_time = pq.read_table(folder / "shared_timecourse.parquet").to_pandas()
        if session == no_events:
            assert len(pairs) == len(structure) == len(over_time) == 0
            continue
        # 3 units: 3 pairs per condition x epoch (2 x 2)
        assert len(pairs) == 3 * 2 * 2
        assert pairs["r_sc"].between(-1, 1).all()
        assert len(structure) == 2 * 2 and len(shared) == 3 * 2 * 2
        assert set(over_time["condition"]) == set(structure["condition"])
        assert len(over_time) == 2 * 57
        assert len(gain) == 3 * 2  # unit x condition
        assert set(gain["unit"]) == set(shared["unit"]) == set(pairs["unit_a"]) | \
            set(pairs["unit_b"])

def test_handoff_package(full_run):
    import json

    out, sheet, _ = full_run
    package = json.loads((out / "datapackage.json").read_text())
    names = {r["name"] for r in package["resources"]}
    assert {"units", "count-fano", "recovery", "population-fano", "group-summary"} <= names
    units = next(r for r in package["resources"] if r["name"] == "units")
    fields = {f["name"]: f for f in units["schema"]["fields"]}
    assert fields["rate_hz"]["type"] == "number" and fields["rate_hz"]["unit"] == "Hz"
    assert (out / units["path"]).exists()
    manifest = json.loads((out / "handoff" / "manifest.json").read_text())
    assert len(manifest["inputs"]) >= len(sheet)
    assert all(len(i["sha256"]) == 64 for i in manifest["inputs"])
    first = manifest["inputs"][0]  # the hash ingestion recorded is the raw file's own
    raw = out.parent / first["path"]  # relative to the working folder, or absolute
    assert first["sha256"] == sha256_of_file(raw)
    assert manifest["config"]["results"] == "out"
    assert "snakemake" in manifest["packages"]
    dictionary = (out / "handoff" / "data_dictionary.md").read_text()
    assert "`isi_lvr`" in dictionary and "Shinomoto" in dictionary


def test_datapackage_passes_the_standards_validator(full_run):
    # the Frictionless validator (the Data Package standard's reference implementation)
    from frictionless import validate

    out, sheet, _ = full_run
    report = validate(str(out / "datapackage.json"))
    invalid = {t.name: [e.message for e in t.errors][:3] for t in report.tasks if not t.valid}
    assert report.valid, invalid
    import json

    package = json.loads((out / "datapackage.json").read_text())
    rows = {}
    for task in report.tasks:
        resource = next(r for r in package["resources"] if r["name"] == task.name)
        key = resource.get("dataset", task.name)
        rows[key] = rows.get(key, 0) + (task.stats.get("rows") or 0)
        schema = resource["schema"]
        if isinstance(schema, str):
            schema = json.loads((out / schema).read_text())
        assert all(f["description"] for f in schema["fields"]), task.name
    # every file of a dataset is its own resource: the validator read every row of the table
    for dataset in ("fano_timecourse", "pair_correlations", "shared_timecourse"):
        assert rows[dataset] == pq.read_table(out / "cohort" / dataset).num_rows, dataset
    assert rows["units"] == pq.read_table(out / "cohort" / "units.parquet").num_rows


def test_every_written_file_is_declared_and_every_declared_file_written(full_run):
    out, _, _ = full_run
    work = out.parent
    proc = run_snakemake(work, "--config", f"sessions={work / 'cohort' / 'sessions.tsv'}",
                         "results=out", "--detailed-summary")
    rows = [line.split("\t") for line in proc.stdout.splitlines() if line.startswith("out/")]
    outputs = {r[0] for r in rows}
    logs = {log for r in rows for log in r[3].split(",") if log and log != "-"}
    written = {str(p.relative_to(work)) for p in out.rglob("*") if p.is_file()}
    # a directory output (a cohort dataset) declares the files inside it
    folders = {o for o in outputs if (work / o).is_dir()}
    outputs = {o for o in outputs if o not in folders}
    written = {w for w in written if not any(w.startswith(f + "/") for f in folders)}
    assert {f.split("/")[-1] for f in folders} == set(COHORT_DATASETS)
    # Snakemake's own benchmark records, the report (written by --report, not by a rule) and
    # the browser check's screenshot of it
    extra = {w for w in written - outputs - logs
             if not w.startswith("out/benchmarks/")
             and w not in ("out/report.html", "out/report_start_page.png")}
    assert not extra, f"written but declared by no rule: {sorted(extra)}"
    assert any(o.endswith(".svg") for o in outputs)
    missing = {o for o in outputs if not (work / o).is_file()}
    assert not missing, f"declared but not written: {sorted(missing)}"


def test_figures_and_report(full_run, tmp_path):
    out, sheet, _ = full_run
    for name in ("population_fano", "unit_metrics", "fano_by_window", "tau_vs_cv", "quality"):
        png = out / "figures" / f"{name}.png"
        assert png.read_bytes()[:4] == b"\x89PNG" and png.stat().st_size > 20_000
        assert png.with_suffix(".svg").exists()
    cohort = out.parent / "cohort" / "sessions.tsv"
    run_snakemake(out.parent, "--config", f"sessions={cohort}", "results=out",
                  "--report", str(out / "report.html"))
    html = (out / "report.html").read_text(errors="ignore")
    assert "Population Fano factor" in html


def test_report_in_a_real_browser(full_run):
    """Headless Chromium opens report.html: the start page shows the cohort summary and the
    main results (the numbers of the group tables), every figure decodes to an image, every
    table page holds a table. The screenshot stays in the results for a person to look at."""
    from report_browser import find_chromium, problems, view_report

    if find_chromium() is None:
        reason = "no Chromium here (Debian: apt-get install chromium)"
        if os.environ.get("CI") == "true":
            pytest.fail(reason + " (CI must run the browser check)")
        pytest.skip(reason)
    out, sheet, _ = full_run
    report = out / "report.html"
    if not report.exists():
        run_snakemake(out.parent, "--config", f"sessions={out.parent / 'cohort' / 'sessions.tsv'}",
                      "results=out", "--report", str(report))
    view = view_report(report, out / "report_start_page.png")
    assert problems(view) == []
    text = view.start_text
    assert f"{len(sheet)} sessions, {sheet['subject'].nunique()} subjects" in text
    for group in sheet["group"].unique():
        assert group in text
    assert "Not for clinical decisions" in text and "Main group results" in text
    summary = pd.read_parquet(out / "cohort" / "group_summary.parquet")
    cv = summary[(summary["metric"] == "isi_cv") & (summary["group"] == "standard")].iloc[0]
    assert with_interval(cv["mean"], cv["mean_ci_lo"], cv["mean_ci_hi"]) in text
    kinds = [item["kind"] for item in view.results]
    n_figures = len(COHORT_FIGURES) + len(sheet)  # and one recovery figure per session
    assert kinds.count("image/png") == n_figures
    assert kinds.count("text/html") == 2
    assert all(item["width"] > 300 for item in view.results if item["kind"] == "image/png")
    assert view.screenshot.read_bytes()[:4] == b"\x89PNG"


def test_every_cohort_figure_renders_with_no_text_outside_it(full_run, tmp_path, monkeypatch):
    """Every cohort figure of the small cohort is drawn again with each figure checked just
    before it is saved: no visible text reaches outside the figure, and every file written is
    a non-empty image."""
    from spikevar.base.layout import COHORT_FIGURES, COHORT_RULE_INPUTS, ResultsLayout
    from spikevar.figures import style
    from spikevar.figures.run import run_cohort_figures

    out, _, _ = full_run
    layout = ResultsLayout(str(out))
    clipped, saved = {}, []
    original = style.save

    def checked_save(fig, path, **kw):
        clipped[Path(path).stem] = style.clipped_texts(fig)
        saved.append(Path(path))
        original(fig, path, **kw)

    monkeypatch.setattr(style, "save", checked_save)
    run_cohort_figures(inputs={t: layout.cohort_output(t)
                               for t in COHORT_RULE_INPUTS["cohort_figures"]},
                       outputs={name: str(tmp_path / f"{name}.png") for name in COHORT_FIGURES})
    assert set(clipped) == set(COHORT_FIGURES)
    assert {name: texts for name, texts in clipped.items() if texts} == {}
    for path in saved:
        for file in (path, path.with_suffix(".svg")):
            assert file.stat().st_size > 5_000, file
        assert path.read_bytes()[:4] == b"\x89PNG"


def test_the_session_recovery_figure_has_no_text_outside_it(full_run, tmp_path, monkeypatch):
    """The per-session recovery figure (fixed layout, no automatic crop) keeps every label of
    every unit's panels inside the figure, fitted and unfitted units alike."""
    from spikevar.base.layout import ResultsLayout
    from spikevar.figures import style
    from spikevar.figures.recovery import draw_session_recovery

    out, sheet, _ = full_run
    layout = ResultsLayout(str(out))
    clipped = {}
    original = style.save

    def checked_save(fig, path, **kw):
        clipped[Path(path).stem] = style.clipped_texts(fig)
        original(fig, path, **kw)

    monkeypatch.setattr(style, "save", checked_save)
    for session in sheet["session"]:
        draw_session_recovery(session=session,
                              spikes_path=layout.session_table(session, "spikes"),
                              recovery_path=layout.session_table(session, "recovery"),
                              output=str(tmp_path / f"{session}.png"), max_units=12)
    assert len(clipped) == len(sheet)
    assert {name: texts for name, texts in clipped.items() if texts} == {}


def test_a_cohort_of_one_group_gets_an_empty_differences_table(full_run, tmp_path):
    """With every session in one group there is nothing to compare: group_summary is written
    and group_differences has no rows but its usual columns (it used to fail)."""
    from spikevar.base.layout import ResultsLayout
    from spikevar.base.parquet_io import read_frame
    from spikevar.cohort.data_dictionary import TABLES
    from spikevar.cohort.run import run_group_summary
    from spikevar.cohort.settings import BootstrapSettings

    out, _, _ = full_run
    layout = ResultsLayout(str(out))
    inputs = {}
    for name in ("units", "count_fano", "recovery", "population_structure", "gain_variance"):
        frame = read_frame(layout.cohort_output(name))
        if "group" in frame.columns:
            frame = frame.assign(group="all")
        inputs[name] = tmp_path / f"{name}.parquet"
        frame.to_parquet(inputs[name])
    run_group_summary(**inputs, summary_out=tmp_path / "summary.parquet",
                      differences_out=tmp_path / "differences.parquet",
                      settings=BootstrapSettings(n_boot=20), seed=1)
    summary = pd.read_parquet(tmp_path / "summary.parquet")
    differences = pd.read_parquet(tmp_path / "differences.parquet")
    assert set(summary["group"]) == {"all"} and len(summary) > 0
    assert len(differences) == 0
    assert set(TABLES["group_differences"]) <= set(differences.columns)


def test_cohort_figures_are_the_same_files_from_one_process_or_two(full_run, tmp_path):
    """The workflow's cohort_figures job draws over its threads; one process drawing the same
    tables again writes the same bytes (no dates or random ids in the SVGs, seeded jitter)."""
    from spikevar.base.layout import COHORT_FIGURES, COHORT_RULE_INPUTS, ResultsLayout
    from spikevar.figures.run import run_cohort_figures

    out, _, _ = full_run
    layout = ResultsLayout(str(out))
    inputs = {t: layout.cohort_output(t) for t in COHORT_RULE_INPUTS["cohort_figures"]}
    for workers in (1, 2):
        folder = tmp_path / f"w{workers}"
        run_cohort_figures(inputs=inputs, workers=workers,
                           outputs={n: str(folder / f"{n}.png") for n in COHORT_FIGURES})
    for name in COHORT_FIGURES:
        for fmt in ("png", "svg"):
            drawn = (tmp_path / "w1" / f"{name}.{fmt}").read_bytes()
            assert drawn == (tmp_path / "w2" / f"{name}.{fmt}").read_bytes(), (name, fmt)
            assert drawn == Path(layout.cohort_figure(name, fmt)).read_bytes(), (name, fmt)
