# Stage 4: cohort tables (per-session tables concatenated, with the sheet's metadata; per-unit
# tables gain `included` from each session's unit_selection).

rule cohort_table:
    input:
        tables=lambda w: [LAYOUT.session_table(s, w.table) for s in SESSIONS],
        selection=lambda w: [LAYOUT.session_table(s, "unit_selection") for s in SESSIONS]
        if w.table in PER_UNIT_TABLES
        else [],
    output:
        parquet=LAYOUT.cohort_table("{table}"),
        csv=LAYOUT.cohort_table("{table}", "csv") if config["cohort"]["csv_copies"] else [],
    wildcard_constraints:
        table="|".join(t for t in SESSION_TABLES if t not in COHORT_DATASETS),
    params:
        sessions=SESSIONS,
        metadata=cohort_metadata(SHEET),
        code=code_fingerprint("cohort.tables"),
    log:
        **LAYOUT.cohort_logs("{table}"),
    benchmark:
        LAYOUT.cohort_benchmark("{table}")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/cohort_table.py"


# Tables whose rows grow with unit pairs or windows: a folder with one file per session.
rule cohort_dataset:
    input:
        tables=lambda w: [LAYOUT.session_table(s, w.table) for s in SESSIONS],
        selection=lambda w: [LAYOUT.session_table(s, "unit_selection") for s in SESSIONS]
        if w.table in PER_UNIT_TABLES
        else [],
    output:
        parquet=directory(LAYOUT.cohort_dataset("{table}")),
    wildcard_constraints:
        table="|".join(COHORT_DATASETS),
    params:
        sessions=SESSIONS,
        metadata=cohort_metadata(SHEET),
        code=code_fingerprint("cohort.tables"),
    log:
        **LAYOUT.cohort_logs("{table}"),
    benchmark:
        LAYOUT.cohort_benchmark("{table}")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/cohort_table.py"
