# Stage 5: population Fano factors and group statistics from the cohort tables.


rule population_fano:
    input:
        LAYOUT.cohort_table("fano_timecourse"),
    output:
        LAYOUT.cohort_table("population_fano"),
    params:
        population=config["population"],
        seed=config["seed"],
        code=code_fingerprint("population.run", "base.settings"),
    log:
        **LAYOUT.cohort_logs("population_fano"),
    benchmark:
        LAYOUT.cohort_benchmark("population_fano")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/population_fano.py"


rule group_summary:
    input:
        **{t: LAYOUT.cohort_table(t) for t in ("units", "count_fano", "recovery")},
    output:
        summary=LAYOUT.cohort_table("group_summary"),
        differences=LAYOUT.cohort_table("group_differences"),
    params:
        bootstrap=config["bootstrap"],
        seed=config["seed"],
        code=code_fingerprint("cohort.run", "base.settings"),
    log:
        **LAYOUT.cohort_logs("group_summary"),
    benchmark:
        LAYOUT.cohort_benchmark("group_summary")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/group_summary.py"
