rule field:
    """Fit a layer of every good sample to the field measurements in the samples folder."""
    input:
        status=expand(f"{RESULTS}/status/{{sample}}.json", sample=sorted(SAMPLES)),
        measurements=MEASUREMENTS[0] if MEASUREMENTS else [],
    output:
        fits=report(f"{RESULTS}/field/field_fit.json", caption="../report/field.rst", category="Field comparison",
                    subcategory="all stations", labels={"content": "field fit (JSON)", "sample": "all"}),
        table=f"{RESULTS}/field/predictions.csv",
    params:
        out=lambda wildcards, output: str(Path(output.fits).parent),
        results_root=lambda wildcards, output: str(Path(output.fits).parent.parent),
    log:
        f"{RESULTS}/logs/field.log",
    benchmark:
        f"{RESULTS}/benchmarks/field.tsv"
    threads: field_job_threads      # processes drawing its figures; it runs once the samples are done
    resources:
        mem_mb=2000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/field.py"
