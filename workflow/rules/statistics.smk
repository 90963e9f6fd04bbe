# Stage 5: population Fano factors and group statistics from the cohort tables.


rule population_fano:
    input:
        f"{RESULTS}/cohort/fano_timecourse.parquet",
    output:
        f"{RESULTS}/cohort/population_fano.parquet",
    params:
        settings=config["population"],
        seed=config["seed"],
        code=code_fingerprint("population.run"),
    log:
        f"{RESULTS}/logs/cohort/population_fano.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/population_fano.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/population_fano.py"


rule group_summary:
    input:
        units=f"{RESULTS}/cohort/units.parquet",
        count_fano=f"{RESULTS}/cohort/count_fano.parquet",
        recovery=f"{RESULTS}/cohort/recovery.parquet",
    output:
        summary=f"{RESULTS}/cohort/group_summary.parquet",
        differences=f"{RESULTS}/cohort/group_differences.parquet",
    params:
        n_boot=config["bootstrap"]["n_boot"],
        seed=config["seed"],
        code=code_fingerprint("cohort.run"),
    log:
        f"{RESULTS}/logs/cohort/group_summary.log",
    benchmark:
        f"{RESULTS}/benchmarks/cohort/group_summary.tsv"
    conda:
        "../envs/spikevar.yaml"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/group_summary.py"
