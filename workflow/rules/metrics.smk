# Stage 2: normalised spikes/events -> per-unit variability tables of one session.


rule session_metrics:
    input:
        spikes=f"{RESULTS}/sessions/{{session}}/spikes.parquet",
        events=f"{RESULTS}/sessions/{{session}}/events.parquet",
    output:
        units=f"{RESULTS}/sessions/{{session}}/units.parquet",
        count_fano=f"{RESULTS}/sessions/{{session}}/count_fano.parquet",
        fano_timecourse=f"{RESULTS}/sessions/{{session}}/fano_timecourse.parquet",
    params:
        metrics=config["metrics"],
        timecourse=config["timecourse"],
        duration_s=lambda w: recording_duration(SHEET, w.session),
        code=code_fingerprint("metrics.session"),
    log:
        f"{RESULTS}/logs/sessions/{{session}}/metrics.log",
    benchmark:
        f"{RESULTS}/benchmarks/sessions/{{session}}/session_metrics.tsv"
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=6000,
        runtime=30,
    script:
        "../../scripts/session_metrics.py"
