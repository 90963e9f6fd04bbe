# Stage 3: refractory recovery fits per unit (the per-session fit figure is in figures.smk).


rule session_recovery:
    input:
        spikes=LAYOUT.session_table("{session}", "spikes"),
    output:
        recovery=LAYOUT.session_table("{session}", "recovery"),
    params:
        recovery=config["recovery"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("pipeline.stages.recovery"),
    log:
        **LAYOUT.session_logs("{session}", "recovery"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_recovery")
    threads: lambda w: recovery_threads(raw_spikes_mb(SHEET, w.session, config), CORES)
    # after the stages every later one waits for (metrics, selection, shared), before the rest
    priority: 1
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=4000,
        runtime=60,
    script:
        "../../scripts/session_recovery.py"
