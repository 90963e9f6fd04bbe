# Stage 6: the cohort figure set.

COHORT_FIGURES = ["population_fano", "unit_metrics", "fano_by_window", "tau_vs_cv", "quality"]


rule cohort_figures:
    input:
        units=f"{RESULTS}/cohort/units.parquet",
        count_fano=f"{RESULTS}/cohort/count_fano.parquet",
        recovery=f"{RESULTS}/cohort/recovery.parquet",
        population_fano=f"{RESULTS}/cohort/population_fano.parquet",
        group_summary=f"{RESULTS}/cohort/group_summary.parquet",
    output:
        population_fano=report(
            f"{RESULTS}/figures/population_fano.png",
            caption="../report/population_fano.rst",
            category="Cohort",
        ),
        unit_metrics=report(
            f"{RESULTS}/figures/unit_metrics.png",
            caption="../report/unit_metrics.rst",
            category="Cohort",
        ),
        fano_by_window=report(
            f"{RESULTS}/figures/fano_by_window.png",
            caption="../report/fano_by_window.rst",
            category="Cohort",
        ),
        tau_vs_cv=report(
            f"{RESULTS}/figures/tau_vs_cv.png",
            caption="../report/tau_vs_cv.rst",
            category="Cohort",
        ),
        quality=report(
            f"{RESULTS}/figures/quality.png",
            caption="../report/quality.rst",
            category="Quality control",
        ),
    params:
        code=code_fingerprint("figures.run"),
    log:
        f"{RESULTS}/logs/cohort/figures.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/cohort_figures.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=20,
    script:
        "../../scripts/cohort_figures.py"
