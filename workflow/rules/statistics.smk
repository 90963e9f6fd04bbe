# Stage 5: population Fano factors and group statistics from the cohort tables.


rule population_fano:
    input:
        **LAYOUT.cohort_inputs("population_fano"),
    output:
        LAYOUT.cohort_table("population_fano"),
    params:
        population=config["population"],
        **cohort_statistics_params(config, "population.run", "base.settings", bootstrap=False),
    log:
        **LAYOUT.cohort_logs("population_fano"),
    benchmark:
        LAYOUT.cohort_benchmark("population_fano")
    # worker processes sharing the subject resamples (one process below 200,000 rows)
    threads: 2
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/population_fano.py"


rule group_summary:
    input:
        **LAYOUT.cohort_inputs("group_summary"),
    output:
        summary=LAYOUT.cohort_table("group_summary"),
        differences=LAYOUT.cohort_table("group_differences"),
    params:
        **cohort_statistics_params(config, "cohort.run", "cohort.shared_stats", "base.settings"),
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


# Reads the cohort datasets one session file at a time (rows grow with pairs and windows).
rule shared_statistics:
    input:
        **LAYOUT.cohort_inputs("shared_statistics"),
    output:
        over_time=LAYOUT.cohort_table("shared_over_time"),
        by_rate=LAYOUT.cohort_table("r_sc_by_rate"),
    params:
        **cohort_statistics_params(config, "cohort.run", "cohort.shared_stats", "base.settings"),
    log:
        **LAYOUT.cohort_logs("shared_statistics"),
    benchmark:
        LAYOUT.cohort_benchmark("shared_statistics")
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/shared_statistics.py"
