# Stage 1: raw spike/event tables -> normalised per-session Parquet.


rule ingest_session:
    input:
        unpack(lambda w: ingest_inputs(SHEET, w.session)),
    output:
        spikes=f"{RESULTS}/sessions/{{session}}/spikes.parquet",
        events=f"{RESULTS}/sessions/{{session}}/events.parquet",
    params:
        settings=lambda w: ingest_settings(SHEET, w.session, config),
        code=code_fingerprint("inputs.ingest"),
    log:
        f"{RESULTS}/logs/sessions/{{session}}/ingest.log",
    benchmark:
        f"{RESULTS}/benchmarks/sessions/{{session}}/ingest_session.tsv"
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/ingest_session.py"
