rule draw_gallery:
    input:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
    output:
        gallery=report(
            directory(f"{OUTDIR}/{{library}}/qc/gallery"),
            patterns=["{card}.svg"],
            caption="../report/gallery.rst",
            category="{library}",
            subcategory="Gallery",
        ),
    log:
        f"{OUTDIR}/logs/{{library}}/draw_gallery.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/draw_gallery.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=30,
    params:
        settings=SETTINGS,
    script:
        "../scripts/draw_gallery.py"


rule plot_charge_profile:
    input:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
    output:
        profile=report(
            f"{OUTDIR}/{{library}}/qc/charge_profile.png",
            caption="../report/charge_profile.rst",
            category="{library}",
            subcategory="Plots",
        ),
    log:
        f"{OUTDIR}/logs/{{library}}/plot_charge_profile.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/plot_charge_profile.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=30,
    params:
        settings=SETTINGS,
    script:
        "../scripts/plot_charge_profile.py"
