# The predicted crossed-polar view of every sample's thin section (config optics.enabled: true).
rule optics:
    """One EBSD export -> results/optics/<sample>/ (the same library call as `fabric2seis optics`).

    Like rule sample, the declared output is a status file ("ok" or the sample's one-line error),
    so that one sample that fails does not stop the suite; the results folder is written whole or
    not at all. It needs only the EBSD file, not the sample's seismic results.
    """
    input:
        sample_input,
    output:
        status=f"{RESULTS}/optics_status/{{sample}}.json",
    params:
        settings=optics_digest,
        results_check=optics_results_check,
        out=lambda wildcards, output: str(Path(output.status).parent.parent / "optics" / wildcards.sample),
        results_root=lambda wildcards, output: str(Path(output.status).parent.parent),
    log:
        f"{RESULTS}/logs/optics/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/optics/{{sample}}.tsv"
    threads: 1
    resources:
        mem_mb=2000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/optics.py"


rule optics_report:
    """A sample's crossed-polar images, retardation map, colour chart and tables, for `snakemake --report`."""
    input:
        status=f"{RESULTS}/optics_status/{{sample}}.json",
    output:
        files=report(
            directory(f"{RESULTS}/report_parts/optics/{{sample}}"),
            patterns=["{figure}.png", "{table}.csv"],
            caption="../report/optics.rst",
            category="Optics",
            subcategory="{sample}",
            labels=report_labels,
        ),
    log:
        f"{RESULTS}/logs/optics_report/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/optics_report/{{sample}}.tsv"
    threads: 1
    resources:
        mem_mb=500,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/optics_report.py"
