rule suite_summary:
    """One row per sample (status "ok" or the sample's error), the short and long spreadsheet tables, and
    the suite comparison figure."""
    input:
        expand(f"{RESULTS}/status/{{sample}}.json", sample=sorted(SAMPLES)),
    output:
        table=report(f"{RESULTS}/suite_summary.csv", caption="../report/suite_summary.rst", category="Suite",
                     subcategory="all samples", labels={"content": "suite summary (table)"}),
        short=f"{RESULTS}/suite_table.csv",
        long=f"{RESULTS}/suite_long.csv",
        figure=report(f"{RESULTS}/suite_comparison.png", caption="../report/suite_comparison.rst", category="Suite",
                      subcategory="all samples", labels={"content": "suite comparison"}),
    log:
        f"{RESULTS}/logs/suite_summary.log",
    benchmark:
        f"{RESULTS}/benchmarks/suite_summary.tsv"
    threads: 1
    resources:
        mem_mb=1000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/suite_summary.py"
