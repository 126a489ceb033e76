rule annotate_chunk:
    input:
        chunk=f"{OUTDIR}/{{library}}/chunks/input/{{chunk}}.parquet",
        user_rules=USER_RULES,
    output:
        annotated=f"{OUTDIR}/{{library}}/chunks/annotated/{{chunk}}.parquet",
        docking=f"{OUTDIR}/{{library}}/chunks/docking/{{chunk}}.parquet",
    log:
        f"{OUTDIR}/logs/{{library}}/annotate_chunk/{{chunk}}.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/annotate_chunk/{{chunk}}.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=CHUNK_RESOURCES.mem_mb,
        runtime=lambda wildcards, attempt: CHUNK_RESOURCES.runtime(attempt),
    params:
        settings=SETTINGS,
        docking=asdict(DOCKING),
        build_docking=BUILD_DOCKING,
        version=IONOTATE_VERSION,
        rule_tables=RULE_TABLES,
    script:
        "../scripts/annotate_chunk.py"
