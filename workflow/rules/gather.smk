rule gather_annotations:
    input:
        chunks=f"{OUTDIR}/{{library}}/chunks/input",
        annotated=annotated_chunks,
    output:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
    log:
        f"{OUTDIR}/logs/{{library}}/gather_annotations.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/gather_annotations.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=60,
    script:
        "../scripts/gather_annotations.py"
