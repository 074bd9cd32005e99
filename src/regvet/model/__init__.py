"""Value types shared by every layer: standard library only, no behaviour beyond small helpers."""

from regvet.model.finding import Finding, Related, Severity
from regvet.model.span import Span

__all__ = ["Finding", "Related", "Severity", "Span"]
