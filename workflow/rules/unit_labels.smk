# Stage 1b: the sheet's optional unit label tables, normalised (both ways of running the
# per-session stages use this rule).


# The sheet's optional unit label table (sessions whose sheet row names one): checked and
# normalised on its own, so that editing labels reruns only the selection and what reads it.
rule ingest_unit_labels:
    input:
        labels=lambda w: unit_labels_input(SHEET, w.session),
    output:
        LAYOUT.session_table("{session}", "unit_labels"),
    params:
        columns=config["unit_labels"],
        code=code_fingerprint("inputs.unit_labels", "base.settings"),
    log:
        **LAYOUT.session_logs("{session}", "unit_labels"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "ingest_unit_labels")
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=1000,
        runtime=10,
    script:
        "../../scripts/ingest_unit_labels.py"
