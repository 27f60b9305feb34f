"""Reports: every word and formatted number trueslope shows, read from the results.

Results never format themselves. :mod:`.numbers` is the one number formatter
(label, unit, precision per figure); :mod:`.prose` words the diagnosis and
the self-check; :mod:`.summary` is the terminal's text; :mod:`.export` the
JSON document and the CSV tables.
"""

from .export import (CYCLE_COLUMNS, FIGURE_DEFINITIONS, analysis_document, cycles_csv,
                     figures_csv, to_json)
from .numbers import FIGURES, figure_text
from .prose import explanation, likely_cause, next_checks, selfcheck_summary, strength_words
from .summary import diagnosis_line, findings_lines, summary_lines, summary_text

__all__ = ["CYCLE_COLUMNS", "FIGURES", "FIGURE_DEFINITIONS", "analysis_document",
           "cycles_csv", "diagnosis_line", "explanation", "figure_text", "figures_csv",
           "findings_lines", "likely_cause", "next_checks", "selfcheck_summary",
           "strength_words", "summary_lines", "summary_text", "to_json"]
