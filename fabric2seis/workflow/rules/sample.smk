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



# Small samples several to a job (config small_samples, fabric2seis/workflow/batches.py): one rule per
# batch, whose outputs are its members' status files, as rule sample's are; ruleorder gives them these
# files. One process runs the members one after the other, each with its own results folder, status file
# and log (logs/sample/<sample>.log); a member whose inputs and results are unchanged is kept.
for _number, _members in enumerate(BATCHES, 1):
    rule:
        name:
            f"sample_batch_{_number}"
        input:
            [str(SAMPLES[name]) for name in _members],
        output:
            status=[f"{RESULTS}/status/{name}.json" for name in _members],
        params:
            samples=list(_members),
            settings=lambda wildcards, members=tuple(_members): [sample_settings_digest(name) for name in members],
            results_check=lambda wildcards, members=tuple(_members): [
                results_state(f"{RESULTS}/status/{name}.json", f"{RESULTS}/{name}") for name in members],
            outs=lambda wildcards, output: [str(Path(path).parent.parent / Path(path).stem) for path in output.status],
            logs=lambda wildcards, output: [str((Path(path).parent.parent / "logs" / "sample" / Path(path).name)
                                                .with_suffix(".log")) for path in output.status],
            results_root=lambda wildcards, output: str(Path(output.status[0]).parent.parent),
        log:
            f"{RESULTS}/logs/sample_batch/{_number}.log",
        benchmark:
            f"{RESULTS}/benchmarks/sample_batch/{_number}.tsv"
        threads: 1
        resources:
            mem_mb=3000,
        conda:
            "../envs/fabric2seis.yaml"
        script:
            "../scripts/run_sample_batch.py"
    workflow.ruleorder(f"sample_batch_{_number}", "sample")
