"""Exports of the catalogue and of selections: files, speed-torque diagrams, the HTML report.

Python API (every heavy library is imported on first use):

* :func:`write_selection` (``selection, path, units="metric", catalog=None``):
  the shortlist and everything behind it to a file of any format of :data:`FORMATS`
  (see :mod:`catalog.export.selection`, :mod:`catalog.export.writers`);
* :func:`export_catalogue` (``catalog, "motors"|"gearheads", path, where=None,
  params=None, units="metric"``): the catalogue or a SQL filter of it;
* :func:`write_report` (``selection, path, units, catalog, side``): the HTML report;
* :func:`candidate_figure` / :func:`comparison_figure`: matplotlib figures of a
  selection's candidates; :func:`plot_speed_torque` draws from plain values
  (:class:`MotorModel`, :class:`Conditions`, :class:`OperatingPoint`);
  :func:`save_figure` writes one of :data:`IMAGE_FORMATS`;
* :func:`write_tables_to_file`: any list of tables to a file, the format by its extension.
"""
from __future__ import annotations

__all__ = ["write_selection", "export_catalogue", "write_report", "render_report", "candidate_figure",
           "comparison_figure", "plot_speed_torque", "plot_comparison", "save_figure", "MotorModel",
           "Conditions", "OperatingPoint", "characteristics", "candidate_detail", "FORMATS", "CAUTION",
           "write_plots", "write_tables_to_file", "IMAGE_FORMATS", "REPORT_EXTENSIONS"]

_WHERE = {
    "write_selection": "selection", "CAUTION": "selection",
    "export_catalogue": "catalogue",
    "write_report": "report", "render_report": "report",
    "candidate_figure": "figures", "comparison_figure": "figures", "write_plots": "figures",
    "plot_speed_torque": "plots", "plot_comparison": "plots", "save_figure": "plots", 
    "MotorModel": "lines", "Conditions": "lines", "OperatingPoint": "lines", "characteristics": "lines",
    "candidate_detail": "detail",
    "FORMATS": "formats", "IMAGE_FORMATS": "formats", "REPORT_EXTENSIONS": "formats",
    "write_tables_to_file": "writers",
}


def __getattr__(name):
    if name in _WHERE:
        import importlib

        return getattr(importlib.import_module(f".{_WHERE[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
