"""The batch workflow and its glue: sample discovery, the suite table, files gathered for the report.

The Snakemake workflow itself ships here too: ``Snakefile``, ``rules/*.smk``, ``scripts/*.py``
(thin shells over the library), ``report/*.rst`` (captions) and ``envs/`` (for ``--use-conda``);
``starter/`` holds the files of ``fabric2seis init``.
"""

from pathlib import Path

#: the packaged Snakefile: ``fabric2seis suite`` runs it in the current folder, from any folder
SNAKEFILE = Path(__file__).resolve().parent / "Snakefile"
