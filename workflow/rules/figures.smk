# Stage 6: the cohort figure set (each figure as PNG, in the report, and SVG).


rule cohort_figures:
    input:
        **LAYOUT.cohort_inputs("cohort_figures"),
    output:
        **{
            name: report(
                LAYOUT.cohort_figure(name, "png"),
                caption=f"../report/{name}.rst",
                category=FIGURE_CATEGORY.get(name, DEFAULT_FIGURE_CATEGORY),
            )
            for name in COHORT_FIGURES
        },
        **{f"{name}_svg": LAYOUT.cohort_figure(name, "svg") for name in COHORT_FIGURES},
    params:
        code=code_fingerprint("figures.run", "figures.shared", "figures.quality", "base.layout"),
    log:
        **LAYOUT.cohort_logs("figures"),
    benchmark:
        LAYOUT.cohort_benchmark("cohort_figures")
    # worker processes, each drawing whole figures
    threads: 2
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=20,
    script:
        "../../scripts/cohort_figures.py"


# The per-session recovery figure (optional: config figures.session_recovery).
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
