checkpoint split_library:
    input:
        library=library_path,
    output:
        chunks=directory(f"{OUTDIR}/{{library}}/chunks/input"),
    log:
        f"{OUTDIR}/logs/{{library}}/split_library.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/split_library.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=60,
    params:
        library=library_spec,
        chunk_size=CHUNK_SIZE,
    script:
        "../scripts/split_library.py"
