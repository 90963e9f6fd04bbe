# Stage 3b: shared variability of one session's simultaneously recorded units (pair
# correlations, factor analysis, its time course, gain variance). Its own job, so that the
# epochs or the shared settings rerun only these tables.


rule session_shared:
    input:
        **{t: LAYOUT.session_table("{session}", t) for t in NORMALISED_TABLES},
        selection=LAYOUT.session_table("{session}", "unit_selection"),
    output:
        **{t: LAYOUT.session_table("{session}", t) for t in SHARED_TABLES},
    params:
        factors=condition_factors(config),
        shared=config["shared"],
        epochs=config["epochs"],
        timecourse=config["timecourse"],
        alignments=config["alignments"],
        event_time_column=config["columns"]["event_time"],
        seed=config["seed"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("pipeline.stages.shared"),
    log:
        **LAYOUT.session_logs("{session}", "shared"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_shared")
    # first when several jobs are ready: every cohort table waits for this chain
    priority: 2
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=6000,
        runtime=30,
    script:
        "../../scripts/session_shared.py"
