# Stage 2b: which units count (config inclusion; the sheet's unit_labels). Its own job, so that
# a change of the inclusion rules reruns only the selection and what reads it, never ingestion
# or the per-unit metrics and fits.


rule session_selection:
    input:
        unpack(lambda w: selection_inputs(SHEET, w.session, LAYOUT)),
        units=LAYOUT.session_table("{session}", "units"),
        events=LAYOUT.session_table("{session}", "events"),
    output:
        unit_selection=LAYOUT.session_table("{session}", "unit_selection"),
    params:
        inclusion=config["inclusion"],
        code=code_fingerprint("pipeline.stages.selection"),
    log:
        **LAYOUT.session_logs("{session}", "selection"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_selection")
    # first when several jobs are ready: every cohort table waits for this chain
    priority: 2
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=2000,
        runtime=10,
    script:
        "../../scripts/session_selection.py"
