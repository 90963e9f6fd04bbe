# Stage 2: normalised spikes/events -> per-unit variability tables of one session.


rule session_metrics:
    input:
        spikes=LAYOUT.session_table("{session}", "spikes"),
    output:
        **{t: LAYOUT.session_table("{session}", t) for t in METRIC_TABLES},
    params:
        metrics=config["metrics"],
        stability=config["stability"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("pipeline.stages.metrics"),
    log:
        **LAYOUT.session_logs("{session}", "metrics"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_metrics")
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
        "../../scripts/session_metrics.py"


# Event-aligned: its own job, so that event settings (timecourse, alignments) rerun only the
# event-aligned tables.
rule session_timecourse:
    input:
        **{t: LAYOUT.session_table("{session}", t) for t in NORMALISED_TABLES},
    output:
        fano_timecourse=LAYOUT.session_table("{session}", "fano_timecourse"),
    params:
        factors=condition_factors(config),
        timecourse=config["timecourse"],
        alignments=config["alignments"],
        event_time_column=config["columns"]["event_time"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("pipeline.stages.timecourse"),
    log:
        **LAYOUT.session_logs("{session}", "timecourse"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_timecourse")
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=6000,
        runtime=30,
    script:
        "../../scripts/session_timecourse.py"
