# Files gathered for `snakemake --report`: per sample, and of the field comparison. Folders, because
# which figures exist is known only once the rule before has run.
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
            directory(f"{RESULTS}/report_parts/samples/{{sample}}"),
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


rule field_report:
    """The field comparison's figures and its predictions table, gathered for `snakemake --report`."""
    input:
        fits=f"{RESULTS}/field/field_fit.json",
    output:
        files=report(
            directory(f"{RESULTS}/report_parts/field"),
            patterns=["{figure}.png", "{table}.csv"],
            caption="../report/field_figures.rst",
            category="Field",
        ),
    params:
        field_dir=lambda wildcards, input: str(Path(input.fits).parent),
    log:
        f"{RESULTS}/logs/field_report.log",
    benchmark:
        f"{RESULTS}/benchmarks/field_report.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/field_report.py"
