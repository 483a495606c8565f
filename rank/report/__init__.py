"""Report: a short list as terminal text, JSON, CSV and a self-contained HTML page."""

from .html import report_html, stick_svg, structure_svg
from .text import (
    assignment_rows,
    csv_text,
    json_text,
    peak_json,
    peak_list_json,
    terminal_text,
    to_json,
    write_whole_file,
)

__all__ = ["assignment_rows", "csv_text", "json_text", "peak_json", "peak_list_json", "report_html", "stick_svg",
           "structure_svg", "terminal_text", "to_json", "write_whole_file"]
