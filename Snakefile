# The project's entry to the batch workflow, which ships inside the package
# (fabric2seis/workflow/Snakefile): plain `snakemake --cores 2` here does what `fabric2seis suite
# --cores 2` does, with config/config.yaml as the config. Included as the `include:` directive
# does, but keeping its `rule all` as the default target (an `include:` keeps only the main
# Snakefile's own first rule as the default).
workflow.include("fabric2seis/workflow/Snakefile", overwrite_default_target=True)
