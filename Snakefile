# fabric2seis batch workflow: every supported EBSD export in the samples folder is a sample.
#   snakemake --cores 2                       (or: fabric2seis suite --cores 2)
#   snakemake --cores 2 --config samples_dir=my_folder results_dir=my_results
from snakemake.utils import validate

from fabric2seis.settings import typed
from fabric2seis.workflow.config import check_config_files, check_config_paths, stop_on_bad_input

with stop_on_bad_input():      # plain YAML and known keys, before Snakemake's own reading (workflow/config.py)
    CONFIG_FILES = check_config_files(["config/config.yaml", *workflow.config_settings.configfiles])
configfile: "config/config.yaml"
config.update(typed(config))   # `--config odf={halfwidth_deg: 15}` arrives as strings
validate(config, "fabric2seis/settings_schema.yaml")
with stop_on_bad_input():      # paths written in a config file stay in the project unless allowed
    check_config_paths(config, CONFIG_FILES, workflow.config_settings.config)

report: "workflow/report/workflow.rst"   # the front page of `snakemake --report`

include: "workflow/rules/common.smk"
include: "workflow/rules/sample.smk"
include: "workflow/rules/suite.smk"
include: "workflow/rules/field.smk"
include: "workflow/rules/report.smk"
include: "workflow/rules/optics.smk"


rule all:
    input:
        f"{RESULTS}/suite_summary.csv",
        f"{RESULTS}/suite_comparison.png",
        f"{RESULTS}/report_parts/suite/suite_overview.csv",
        expand(f"{RESULTS}/report_parts/samples/{{sample}}", sample=sorted(SAMPLES)),
        expand(f"{RESULTS}/report_parts/stacks/{{stack}}", stack=STACKS),
        [f"{RESULTS}/field/field_fit.json", f"{RESULTS}/report_parts/field"] if MEASUREMENTS else [],
        expand(f"{RESULTS}/report_parts/optics/{{sample}}", sample=sorted(SAMPLES))
        if (config.get("optics") or {}).get("enabled") else [],
