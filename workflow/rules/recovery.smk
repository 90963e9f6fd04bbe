# Stage 3: refractory recovery fits per unit, and the per-session fit figure.


rule session_recovery:
    input:
        spikes=f"{RESULTS}/sessions/{{session}}/spikes.parquet",
    output:
        f"{RESULTS}/sessions/{{session}}/recovery.parquet",
    params:
        recovery=config["recovery"],
        duration_s=lambda w: recording_duration(SHEET, w.session),
        code=code_fingerprint("recovery.table"),
    log:
        f"{RESULTS}/logs/sessions/{{session}}/recovery.log",
    benchmark:
        f"{RESULTS}/benchmarks/sessions/{{session}}/session_recovery.tsv"
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
        spikes=f"{RESULTS}/sessions/{{session}}/spikes.parquet",
        recovery=f"{RESULTS}/sessions/{{session}}/recovery.parquet",
    output:
        report(
            f"{RESULTS}/figures/sessions/{{session}}_recovery.png",
            caption="../report/session_recovery.rst",
            category="Recovery fits",
            subcategory="{session}",
        ),
    params:
        max_units=config["figures"]["max_units_per_session"],
        duration_s=lambda w: recording_duration(SHEET, w.session),
        code=code_fingerprint("figures.recovery"),
    log:
        f"{RESULTS}/logs/sessions/{{session}}/recovery_figure.log",
    benchmark:
        f"{RESULTS}/benchmarks/sessions/{{session}}/session_recovery_figure.tsv"
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=2000,
        runtime=20,
    script:
        "../../scripts/session_recovery_figure.py"
