rule sample:
    """One EBSD export -> results/<sample>/ (the same library call as `fabric2seis sample`)."""
    input:
        sample_input,
    output:
        summary=f"{RESULTS}/{{sample}}/summary.json",
    params:
        settings=settings_digest,
        out=lambda wildcards: f"{RESULTS}/{wildcards.sample}",
    log:
        f"{RESULTS}/logs/sample/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/sample/{{sample}}.tsv"
    threads: 1
    resources:
        mem_mb=2000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/run_sample.py"
