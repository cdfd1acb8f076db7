rule sample:
    """One EBSD export -> results/<sample>/ (the same library call as `fabric2seis sample`).

    The declared output is the sample's status file: "ok", or the one-line error of bad input or
    of a program error, so that one bad file does not stop the suite. The results folder is
    written by run_sample, whole or not at all, and only over a folder fabric2seis wrote (a
    declared folder would be deleted by Snakemake before the job, unchecked). Its files are
    tracked through the status file's manifest: `results_check` changes when a file is missing,
    and Snakemake reruns the sample (fabric2seis/workflow/status.py). The job's threads (a large map
    gets the cores the suite leaves idle, suite.sample_threads) are handed to the run, which uses no more.
    """
    input:
        sample_input,
    output:
        status=f"{RESULTS}/status/{{sample}}.json",
    params:
        settings=settings_digest,
        results_check=results_check,
        out=lambda wildcards: f"{RESULTS}/{wildcards.sample}",
        results_root=lambda wildcards, output: str(Path(output.status).parent.parent),
    log:
        f"{RESULTS}/logs/sample/{{sample}}.log",
    benchmark:
        f"{RESULTS}/benchmarks/sample/{{sample}}.tsv"
    threads: sample_job_threads      # 2 for a large map on idle cores, else 1; the run uses no more
    resources:
        mem_mb=3000,
    conda:
        "../envs/fabric2seis.yaml"
    script:
        "../scripts/run_sample.py"

