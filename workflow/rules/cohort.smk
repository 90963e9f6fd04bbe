# Stage 4: cohort tables (per-session tables concatenated, with the sheet's metadata).

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
        code=code_fingerprint("cohort.tables"),
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
