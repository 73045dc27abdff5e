"""Exports of a stored run: JSON and CSV tables, one CCSDS CDM per event, a one-page report."""

from .cdm_out import cdm_for_encounter, write_event_cdm
from .report import render_report
from .tables import CSV_FIELDS, write_csv, write_json
from .write import export_run

__all__ = ["cdm_for_encounter", "write_event_cdm", "render_report", "CSV_FIELDS", "write_csv",
           "write_json", "export_run"]
