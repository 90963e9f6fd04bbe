# Stage 4: cohort tables, population statistics and the hand-off package.

SESSION_TABLES = ["units", "count_fano", "fano_timecourse", "recovery"]


rule cohort_table:
    input:
        lambda w: expand(
            f"{RESULTS}/sessions/{{session}}/{w.table}.parquet", session=SESSIONS
        ),
    output:
        parquet=f"{RESULTS}/cohort/{{table}}.parquet",
        csv=f"{RESULTS}/cohort/{{table}}.csv" if config["cohort"]["csv_copies"] else [],
    wildcard_constraints:
        table="|".join(SESSION_TABLES),
    params:
        sessions=SESSIONS,
        metadata=cohort_metadata(SHEET),
        code=code_fingerprint("cohort_tables", "parquet_io"),
    log:
        f"{RESULTS}/logs/cohort/{{table}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/{{table}}.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/cohort_table.py"


rule population_fano:
    input:
        f"{RESULTS}/cohort/fano_timecourse.parquet",
    output:
        f"{RESULTS}/cohort/population_fano.parquet",
    params:
        settings=config["population"],
        seed=config["seed"],
        code=code_fingerprint("population_fano", "cohort_run"),
    log:
        f"{RESULTS}/logs/cohort/population_fano.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/population_fano.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/population_fano.py"


rule group_summary:
    input:
        units=f"{RESULTS}/cohort/units.parquet",
        count_fano=f"{RESULTS}/cohort/count_fano.parquet",
        recovery=f"{RESULTS}/cohort/recovery.parquet",
    output:
        summary=f"{RESULTS}/cohort/group_summary.parquet",
        differences=f"{RESULTS}/cohort/group_differences.parquet",
    params:
        n_boot=config["bootstrap"]["n_boot"],
        seed=config["seed"],
        code=code_fingerprint("group_stats", "hierarchical_bootstrap", "cohort_run"),
    log:
        f"{RESULTS}/logs/cohort/group_summary.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/group_summary.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/group_summary.py"


rule handoff:
    input:
        tables=expand(
            f"{RESULTS}/cohort/{{table}}.parquet",
            table=SESSION_TABLES
            + ["population_fano", "group_summary", "group_differences"],
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
        code=code_fingerprint("handoff", "data_dictionary"),
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
