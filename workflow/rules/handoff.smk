# Stage 7: the hand-off package (data dictionary, datapackage.json, manifest).


rule handoff:
    input:
        tables=expand(
            f"{RESULTS}/cohort/{{table}}.parquet",
            table=[*SESSION_TABLES, "population_fano", "group_summary", "group_differences"],
        ),
        normalised=expand(
            f"{RESULTS}/sessions/{{session}}/{{kind}}.parquet",
            session=SESSIONS,
            kind=("spikes", "events"),
        ),
    output:
        failed=f"{RESULTS}/cohort/failed_sessions.parquet",
        dictionary_md=f"{RESULTS}/handoff/data_dictionary.md",
        dictionary_json=f"{RESULTS}/handoff/data_dictionary.json",
        datapackage=f"{RESULTS}/datapackage.json",
        manifest=f"{RESULTS}/handoff/manifest.json",
    params:
        sheet=sheet_records(SHEET),
        config=config,
        repo=str(REPO),
        code=code_fingerprint("cohort.handoff", "cohort.data_dictionary", "cohort.tables"),
    log:
        f"{RESULTS}/logs/cohort/handoff.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/handoff.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=2000,
        runtime=10,
    script:
        "../../scripts/handoff.py"
