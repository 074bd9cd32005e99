"""How the rules write numbers: p-values and four significant digits (shared by every message)."""

from __future__ import annotations


def p(value: float | None) -> str:
    if value is None:
        return "p = ?"
    if value < 0.001:
        return "p < 0.001"
    return f"p = {value:.3f}" if value < 0.1 else f"p = {value:.2f}"


def num(value: float | None) -> str:
    """Four significant digits, trailing zeros kept (14.09, 11.00, 5.339, 0.01234, 4.328e+04)."""
    if value is None:
        return "?"
    text = f"{value:#.4g}"
    mantissa, e, exponent = text.partition("e")
    return mantissa.rstrip(".") + e + exponent
