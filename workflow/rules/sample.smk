rule sample:
    """One EBSD export -> results/<sample>/ (the same library call as `fabric2seis sample`).

    The declared output is the sample's status file: "ok", or the one-line error of bad input, so
    that one bad file does not stop the suite. The results folder is written by run_sample, whole
    or not at all.
    """
    input:
        sample_input,
    output:
        status=f"{RESULTS}/status/{{sample}}.json",
    params:
        settings=settings_digest,
        out=lambda wildcards: f"{RESULTS}/{wildcards.sample}",
    log:
        f"{RESULTS}/logs/sample/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/sample/{{sample}}.tsv"
    threads: 1
    resources:
        mem_mb=3000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/run_sample.py"


rule sample_report:
    """A sample's figures and small tables, gathered for `snakemake --report`, grouped by sample.

    A folder, because which figures exist is known only once the sample has run (none for a
    sample that failed, no splitting figure without field settings); key_numbers.csv is always
    there, with the sample's error if it failed.
    """
    input:
        status=f"{RESULTS}/status/{{sample}}.json",
    output:
        files=report(
            directory(f"{RESULTS}/report_parts/{{sample}}"),
            patterns=["{figure}.png", "{table}.csv"],
            caption="../report/sample.rst",
            category="Samples",
            subcategory="{sample}",
            labels=report_labels,
        ),
    log:
        f"{RESULTS}/logs/sample_report/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/sample_report/{{sample}}.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/sample_report.py"
