rule export_docking_structures:
    input:
        docking=docking_chunks,
    output:
        structures=DOCKING_FILES,
    log:
        f"{OUTDIR}/logs/{{library}}/export_docking_structures.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/export_docking_structures.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=60,
    params:
        phs=[ph for ph, _ in DOCKING_TARGETS],
    script:
        "../scripts/export_docking_structures.py"


rule filter_library:
    input:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
        docking=filter_docking_chunks,
    output:
        parquet=FILTER_FILES["parquet"],
        sdf=FILTER_FILES["sdf"],
        counts=report(
            f"{OUTDIR}/{{library}}/qc/filters.tsv",
            caption="../report/filters.rst",
            category="{library}",
            subcategory="Tables",
        ),
    log:
        f"{OUTDIR}/logs/{{library}}/filter_library.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/filter_library.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=60,
    params:
        filters=config["filters"],
    script:
        "../scripts/filter_library.py"
