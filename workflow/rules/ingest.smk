# Stage 1: raw spike/event tables -> normalised per-session Parquet.


rule ingest_session:
    input:
        unpack(lambda w: ingest_inputs(SHEET, w.session, config)),
    output:
        **{t: LAYOUT.session_table("{session}", t) for t in NORMALISED_TABLES},
    params:
        settings=lambda w: ingest_settings(SHEET, w.session, config),
        code=code_fingerprint("pipeline.stages.ingest"),
    log:
        **LAYOUT.session_logs("{session}", "ingest"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "ingest_session")
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=4000,
        runtime=30,
    script:
        "../../scripts/ingest_session.py"
