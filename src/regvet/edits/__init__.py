"""Source rewrites for quick fixes: the only regvet package that writes code (and imports libcst).

regvet reads code with :mod:`ast`; it writes code here, with libcst for changes to the syntax
(:func:`set_cov_type`, :func:`insert_after_statement`) and with :mod:`tokenize`-guided text
insertion for comments (:func:`add_waiver`). Every function takes source text and returns new
source text in which every byte outside the edited region is unchanged; :func:`minimal_edit`
turns the pair into one :class:`TextEdit` for an editor. Positions follow :class:`regvet.model.span.Span`:
1-based lines, 0-based columns in code points, exclusive ends. No I/O, no printing.
"""

from __future__ import annotations

from regvet.edits.comments import add_waiver
from regvet.edits.rewrite import insert_after_statement, set_cov_type
from regvet.edits.text import EditError, TextEdit, minimal_edit

__all__ = ["EditError", "TextEdit", "add_waiver", "insert_after_statement", "minimal_edit", "set_cov_type"]
