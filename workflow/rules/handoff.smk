# Stage 7: the hand-off package (data dictionary, datapackage.json, manifest).


rule handoff:
    input:
        tables=[LAYOUT.cohort_output(t) for t in (*SESSION_TABLES, *STATISTICS_TABLES)],
        normalised=[
            LAYOUT.session_table(s, kind) for s in SESSIONS for kind in NORMALISED_TABLES
        ],
    output:
        failed=LAYOUT.cohort_table("failed_sessions"),
        dictionary_md=LAYOUT.handoff_file("data_dictionary.md"),
        dictionary_json=LAYOUT.handoff_file("data_dictionary.json"),
        datapackage=LAYOUT.datapackage(),
        manifest=LAYOUT.handoff_file("manifest.json"),
        **{f"schema_{t}": LAYOUT.dataset_schema(t) for t in COHORT_DATASETS},
    params:
        sheet=sheet_records(SHEET),
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
