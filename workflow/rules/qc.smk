rule summarize_qc:
    input:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
        filters=FILTER_COUNTS,
    output:
        # one output per entry of annotate.qc.report.OUTPUTS, captioned by workflow/report/<name>.rst
        **{
            name: report(
                f"{OUTDIR}/{{library}}/qc/{name}.{'json' if name in QC_JSON_OUTPUTS else 'tsv'}",
                caption=f"../report/{name}.rst",
                category="{library}",
                subcategory="Run" if name in QC_JSON_OUTPUTS else "Tables",
            )
            for name in QC_OUTPUTS
        },
    log:
        f"{OUTDIR}/logs/{{library}}/summarize_qc.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/summarize_qc.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=60,
    script:
        "../scripts/summarize_qc.py"


rule plot_qc:
    input:
        annotated=f"{OUTDIR}/{{library}}/annotated.parquet",
    output:
        charge_plot=report(
            f"{OUTDIR}/{{library}}/qc/charge_by_ph.png",
            caption="../report/charge_by_ph_plot.rst",
            category="{library}",
            subcategory="Plots",
        ),
        pka_plot=report(
            f"{OUTDIR}/{{library}}/qc/pka_by_group.png",
            caption="../report/pka_by_group_plot.rst",
            category="{library}",
            subcategory="Plots",
        ),
    log:
        f"{OUTDIR}/logs/{{library}}/plot_qc.log",
    benchmark:
        f"{OUTDIR}/benchmarks/{{library}}/plot_qc.tsv"
    conda:
        ENV
    threads: 1
    resources:
        mem_mb=1000,
        runtime=30,
    script:
        "../scripts/plot_qc.py"
