# Stage 7: the hand-off package (data dictionary, datapackage.json, manifest).


rule handoff:
    input:
        tables=[LAYOUT.cohort_output(t) for t in (*SESSION_TABLES, *STATISTICS_TABLES)],
        normalised=handoff_normalised_inputs(SHEET, LAYOUT, NORMALISED_TABLES),
    output:
        failed=LAYOUT.cohort_table("failed_sessions"),
        dictionary_md=LAYOUT.handoff_file("data_dictionary.md"),
        dictionary_json=LAYOUT.handoff_file("data_dictionary.json"),
        datapackage=LAYOUT.datapackage(),
        manifest=LAYOUT.handoff_file("manifest.json"),
        **{f"schema_{t}": LAYOUT.dataset_schema(t) for t in COHORT_DATASETS},
    params:
        sheet=sheet_records(SHEET),
        factors=condition_factors(config),
        config=config,
        repo=str(REPO),
        code=code_fingerprint("cohort.handoff", "cohort.data_dictionary", "cohort.tables"),
    log:
        **LAYOUT.cohort_logs("handoff"),
    benchmark:
        LAYOUT.cohort_benchmark("handoff")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=2000,
        runtime=10,
    script:
        "../../scripts/handoff.py"


# The report's own pages: the start page of `snakemake --report` (the Snakefile's report:
# directive points at it once it exists) and the group tables, shown under "Group statistics".
rule report_pages:
    input:
        units=LAYOUT.cohort_table("units"),
        group_summary=LAYOUT.cohort_table("group_summary"),
        group_differences=LAYOUT.cohort_table("group_differences"),
    output:
        start=LAYOUT.report_page("start_page.rst"),
        **{
            table: report(
                LAYOUT.report_page(f"{table}.html"),
                caption=f"../report/{table}.rst",
                category="Group statistics",
            )
            for table in REPORT_TABLES
        },
    params:
        sessions=SESSIONS,
        alignment=primary_alignment(config),
        categories=report_categories(config),
        code=code_fingerprint("cohort.report_pages", "base.layout"),
    log:
        **LAYOUT.cohort_logs("report_pages"),
    benchmark:
        LAYOUT.cohort_benchmark("report_pages")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=2000,
        runtime=10,
    script:
        "../../scripts/report_pages.py"
