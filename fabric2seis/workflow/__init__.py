"""Workflow glue: sample discovery, the suite table, files gathered for the report."""
