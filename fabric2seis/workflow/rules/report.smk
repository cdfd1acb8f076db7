# Files gathered for `snakemake --report`: the suite's overview, per sample, per field station and per
# stack. Folders, because which figures exist is known only once the rule before has run. The report's
# categories: Suite, Samples (a subcategory per sample), Field comparison (per station, and all
# stations), Stacks (per stack folder); workflow/report/workflow.rst is its front page.
rule report_overview:
    """Every sample with its status, error and settings digest; the suite's version and settings digest."""
    input:
        status=expand(f"{RESULTS}/status/{{sample}}.json", sample=sorted(SAMPLES)),
    output:
        table=report(f"{RESULTS}/report_parts/suite/suite_overview.csv", caption="../report/suite_overview.rst",
                     category="Suite", subcategory="all samples", labels=overview_labels),
        about=f"{RESULTS}/report_parts/suite/about.json",
    params:
        version=__version__,
    log:
        f"{RESULTS}/logs/report_overview.log",
    benchmark:
        f"{RESULTS}/benchmarks/report_overview.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/overview_report.py"


rule sample_report:
    """A sample's figures and small tables, gathered for `snakemake --report`, grouped by sample.

    A folder, because which figures exist is known only once the sample has run (none for a
    sample that failed, no splitting figure without field settings): key_numbers.csv and the
    figures of a sample that succeeded, error.csv alone for a sample that failed.
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
            labels=sample_report_labels,
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
    """The field comparison's figures and tables sorted by station, gathered for `snakemake --report`."""
    input:
        fits=f"{RESULTS}/field/field_fit.json",
    output:
        files=report(
            directory(f"{RESULTS}/report_parts/field"),
            patterns=["all/{figure,[^/]+}.png", "all/{table,[^/]+}.csv",
                      "stations/{station,[^/]+}/{sample,[^/]+}/{figure,[^/]+}.png",
                      "stations/{station,[^/]+}/{table,[^/]+}.csv"],
            caption="../report/field_figures.rst",
            category="Field comparison",
            subcategory=field_subcategory,
            labels=field_labels,
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


rule stack_report:
    """A stack of layers written by `fabric2seis field --stack` into the results folder, for the report."""
    input:
        stack=f"{RESULTS}/{{stack}}/stack.json",
    output:
        files=report(
            directory(f"{RESULTS}/report_parts/stacks/{{stack}}"),
            patterns=["{figure}.png", "{table}.csv"],
            caption="../report/stack.rst",
            category="Stacks",
            subcategory="{stack}",
            labels=content_labels,
        ),
    params:
        stack_dir=lambda wildcards, input: str(Path(input.stack).parent),
    log:
        f"{RESULTS}/logs/stack_report/{{stack}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/stack_report/{{stack}}.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/stack_report.py"
