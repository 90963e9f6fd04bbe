# Stage 3: refractory recovery fits per unit, and the per-session fit figure.


rule session_recovery:
    input:
        spikes=LAYOUT.session_table("{session}", "spikes"),
    output:
        LAYOUT.session_table("{session}", "recovery"),
    params:
        recovery=config["recovery"],
        span=lambda w: declared_span(SHEET, w.session),
        code=code_fingerprint("recovery.table", "base.settings"),
    log:
        **LAYOUT.session_logs("{session}", "recovery"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_recovery")
    threads: lambda wildcards: recovery_threads(raw_spikes_mb(SHEET, wildcards.session, config))
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=4000,
        runtime=60,
    script:
        "../../scripts/session_recovery.py"


rule session_recovery_figure:
    input:
        spikes=LAYOUT.session_table("{session}", "spikes"),
        recovery=LAYOUT.session_table("{session}", "recovery"),
    output:
        png=report(
            LAYOUT.recovery_figure("{session}", "png"),
            caption="../report/session_recovery.rst",
            category=RECOVERY_FIGURE_CATEGORY,
            subcategory="{session}",
        ),
        svg=LAYOUT.recovery_figure("{session}", "svg"),
    params:
        max_units=config["figures"]["max_units_per_session"],
        code=code_fingerprint("figures.recovery", "figures.settings", "base.settings"),
    log:
        **LAYOUT.session_logs("{session}", "recovery_figure"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "session_recovery_figure")
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=2000,
        runtime=20,
    script:
        "../../scripts/session_recovery_figure.py"
