# Stage 2: normalised spikes/events -> per-unit variability tables of one session.


rule session_metrics:
    input:
        **{t: LAYOUT.session_table("{session}", t) for t in NORMALISED_TABLES},
    output:
        **{
            t: LAYOUT.session_table("{session}", t)
            for t in ("units", "count_fano", "fano_timecourse")
        },
    params:
        metrics=config["metrics"],
        timecourse=config["timecourse"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("metrics.session", "base.settings"),
    log:
        **LAYOUT.session_logs("{session}", "metrics"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_metrics")
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=6000,
        runtime=30,
    script:
        "../../scripts/session_metrics.py"
