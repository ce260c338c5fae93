"""The self-contained HTML report.

    write_report     one HTML file (figures embedded, no network needed) → ReportOutput
    ReportOutput     path, figures embedded, PNG files written
    CAUTIONS         the cautions printed in every report
"""
from ._html import CAUTIONS, ReportOutput, render_report, write_report

__all__ = ["write_report", "ReportOutput", "CAUTIONS", "render_report"]
