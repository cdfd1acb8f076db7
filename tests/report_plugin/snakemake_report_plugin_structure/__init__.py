"""A Snakemake report plugin for the tests: the report's structure as JSON, not as HTML.

``snakemake --reporter structure --report-structure-path FILE`` (with this folder's parent on
PYTHONPATH, where Snakemake's plugin registry finds packages named ``snakemake_report_plugin_*``)
writes the categories, subcategories and entries (name, path, labels, caption, MIME type) and the
front page, from the data Snakemake hands every report plugin through the interface of
``snakemake-interface-report-plugins`` (``ReporterBase``: ``results``, ``workflow_description``).
"""

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional

from snakemake_interface_report_plugins.reporter import ReporterBase
from snakemake_interface_report_plugins.settings import ReportSettingsBase


@dataclass
class ReportSettings(ReportSettingsBase):
    path: Optional[Path] = field(default=None, metadata={"help": "JSON file to write the report's structure to",
                                                         "env_var": False, "required": True})


class Reporter(ReporterBase):
    def render(self):
        categories = {}
        for category, subcategories in self.results.items():
            for subcategory, records in subcategories.items():
                categories.setdefault(category.name, {})[subcategory.name] = [
                    {"name": r.name, "path": str(r.path), "labels": r.labels, "caption": r.caption, "mime": r.mime}
                    for r in records]
        Path(self.settings.path).write_text(json.dumps({"description": self.workflow_description,
                                                        "categories": categories}, indent=1))
