rule suite_summary:
    """One row per sample: results/suite_summary.csv."""
    input:
        expand(f"{RESULTS}/{{sample}}/summary.json", sample=sorted(SAMPLES)),
    output:
        f"{RESULTS}/suite_summary.csv",
    log:
        f"{RESULTS}/logs/suite_summary.log",
    benchmark:
        f"{RESULTS}/benchmarks/suite_summary.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/suite_summary.py"
