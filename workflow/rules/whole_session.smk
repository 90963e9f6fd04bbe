# Stages 1-3b in one job per session (config session_jobs: whole_session): ingestion, metrics,
# time course, recovery fits, selection and shared variability, run one after another in one
# process. For cohorts of many small sessions, where a job's start-up outweighs a stage's work.
# Any per-session setting or stage code change reruns the whole session. The params are the
# union of the per-stage rules' params, under the same names.


rule whole_session:
    input:
        unpack(lambda w: ingest_inputs(SHEET, w.session, config)),
        unpack(lambda w: selection_inputs(SHEET, w.session, LAYOUT)),
    output:
        **{t: LAYOUT.session_table("{session}", t) for t in NORMALISED_TABLES},
        **{t: LAYOUT.session_table("{session}", t) for t in SESSION_TABLES},
    params:
        settings=lambda w: ingest_settings(SHEET, w.session, config),
        span=lambda w: declared_span(SHEET, w.session),
        metrics=config["metrics"],
        stability=config["stability"],
        timecourse=config["timecourse"],
        alignments=config["alignments"],
        event_time_column=config["columns"]["event_time"],
        factors=condition_factors(config),
        recovery=config["recovery"],
        inclusion=config["inclusion"],
        shared=config["shared"],
        epochs=config["epochs"],
        seed=config["seed"],
        code=code_fingerprint("pipeline.whole_session"),
    log:
        **LAYOUT.session_logs("{session}", "whole_session"),
    benchmark:
        LAYOUT.session_benchmark("{session}", "whole_session")
    threads: lambda wildcards: recovery_threads(raw_spikes_mb(SHEET, wildcards.session, config))
    conda:
        "../envs/spikevar.yaml"
    group:
        "session"
    resources:
        mem_mb=6000,
        runtime=120,
    script:
        "../../scripts/whole_session.py"
