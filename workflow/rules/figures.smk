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
