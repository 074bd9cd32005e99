"""The report's residual plots, drawn with matplotlib as SVG text (``regvet report --run`` only).

matplotlib is the optional ``report`` extra and is imported here only, inside :func:`residual_plots`;
``regvet check`` never imports this module. The points come from the run
(``FitRecord.points``, computed in the child by ``runtime/probe/regvet_points.py``).

Each plot is standalone SVG text with its ids made unique (several plots live in one HTML file),
text as SVG text in the viewer's sans-serif font (no font file), no date in the metadata (the same run gives the same file),
and an alternative text that says what it shows and how many points are drawn.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from regvet.model.stats_schema import PlotPoints


POINT = "#1f4e79"  # dark blue on white
REFERENCE = "#9c2a1f"  # dark red


@dataclass(frozen=True)
class Plot:
    kind: str  # "resid-fitted", "qq", "scale-location", "time"
    title: str
    alt: str
    svg: str


class PlotsUnavailable(Exception):
    """matplotlib is not installed (the ``report`` extra)."""


def _unique_ids(svg: str, prefix: str) -> str:
    ids = set(re.findall(r'\bid="([^"]+)"', svg))
    if not ids:
        return svg

    def ref(m: re.Match) -> str:
        name = m.group(2)
        return f"{m.group(1)}#{prefix}-{name}" if name in ids else m.group(0)

    svg = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}-{m.group(1)}"', svg)
    return re.sub(r"(url\(|href=\")#([^\")]+)", ref, svg)


def _svg(fig, prefix: str, label: str) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "regvet"})
    text = buf.getvalue()
    text = text[text.index("<svg") :]
    text = re.sub(r"<metadata>.*?</metadata>", "", text, flags=re.S)
    text = _small(text)
    text = _unique_ids(text, prefix)
    # An accessible image: role, label and a title element first.
    head_end = text.index(">") + 1
    head = text[:head_end]
    head = head.replace("<svg ", f'<svg role="img" aria-label="{_attr(label)}" ', 1)
    return head + f"<title>{_text(label)}</title>" + text[head_end:]


def _small(svg: str) -> str:
    """The same drawing in fewer bytes: no comments, no layout whitespace, coordinates to 0.01 pt."""
    svg = re.sub(r"<!--.*?-->", "", svg, flags=re.S)
    svg = re.sub(r">\s+<", "><", svg)
    svg = re.sub(r"\s*\n\s*", " ", svg)
    svg = re.sub(r"(?<![\w#-])(-?\d+\.\d\d)\d+", r"\1", svg)

    def shared_style(m: re.Match) -> str:  # markers: one style on their group instead of on every point
        uses = m.group(2)
        styles = set(re.findall(r' style="([^"]*)"', uses))
        if len(styles) != 1 or uses.count("<use ") != len(re.findall(r' style="', uses)):
            return m.group(0)
        return f'<g{m.group(1)} style="{styles.pop()}">' + re.sub(r' style="[^"]*"', "", uses) + "</g>"

    return re.sub(r"<g((?: clip-path=\"[^\"]*\")?)>((?:<use [^>]*/>)+)</g>", shared_style, svg)


def _attr(text: str) -> str:
    return text.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;").replace(">", "&gt;")


def _text(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def residual_plots(points: PlotPoints, name: str, prefix: str) -> list[Plot]:
    """The residual plots of one fit. Raises :class:`PlotsUnavailable` without matplotlib."""
    try:
        import matplotlib

        matplotlib.rcParams["svg.hashsalt"] = "regvet"
        # Text as SVG text in the reader's own sans-serif font (no font file is embedded or fetched).
        matplotlib.rcParams["svg.fonttype"] = "none"
        from matplotlib.backends.backend_svg import FigureCanvasSVG
        from matplotlib.figure import Figure
    except ImportError as exc:
        raise PlotsUnavailable(f"the residual plots need matplotlib (pip install 'regvet[report]'): {exc}") from None

    n, drawn = points["nobs"], points["drawn"]
    sample = (
        f"all {n} observations"
        if drawn >= n
        else f"{drawn} of {n} observations (a random subset, seed {points['seed']})"
    )
    ranks = len(points["qq_sample"])
    ranked = f"all {n} observations" if ranks >= n else f"{ranks} evenly spaced ranks of {n}"
    out: list[Plot] = []

    def figure():
        fig = Figure(figsize=(4.6, 3.3))
        FigureCanvasSVG(fig)
        ax = fig.add_subplot(1, 1, 1)
        ax.tick_params(labelsize=8)
        return fig, ax

    def finish(kind: str, title: str, alt: str, fig) -> None:
        fig.tight_layout()
        out.append(Plot(kind, title, alt, _svg(fig, f"{prefix}{len(out)}", alt)))

    fig, ax = figure()
    ax.axhline(0.0, color=REFERENCE, linewidth=0.8)
    ax.plot(points["fitted"], points["resid"], linestyle="none", marker="o", markersize=2.2, color=POINT)
    ax.set_xlabel("fitted value", fontsize=9)
    ax.set_ylabel("residual", fontsize=9)
    ax.set_title("Residuals against fitted values", fontsize=9)
    finish(
        "resid-fitted",
        "Residuals against fitted values",
        f"Scatter plot of the residuals of {name} against its fitted values, {sample}, with a line at zero; "
        "a curve suggests a missing term, a funnel suggests unequal variance.",
        fig,
    )

    fig, ax = figure()
    lo = min(points["qq_theoretical"][0], points["qq_sample"][0])
    hi = max(points["qq_theoretical"][-1], points["qq_sample"][-1])
    ax.plot([lo, hi], [lo, hi], color=REFERENCE, linewidth=0.8)
    ax.plot(points["qq_theoretical"], points["qq_sample"], linestyle="none", marker="o", markersize=2.2, color=POINT)
    ax.set_xlabel("normal quantile", fontsize=9)
    ax.set_ylabel("studentized residual", fontsize=9)
    ax.set_title("Normal Q-Q plot", fontsize=9)
    finish(
        "qq",
        "Normal Q-Q plot",
        f"Normal Q-Q plot of the studentized residuals of {name}, {ranked}, against normal quantiles, with the "
        "line y = x; points off the line in the tails mean heavier or lighter tails than normal.",
        fig,
    )

    fig, ax = figure()
    ax.plot(points["fitted"], points["sqrt_abs_studentized"], linestyle="none", marker="o", markersize=2.2, color=POINT)
    ax.set_xlabel("fitted value", fontsize=9)
    ax.set_ylabel("√|studentized residual|", fontsize=9)
    ax.set_title("Scale-location", fontsize=9)
    finish(
        "scale-location",
        "Scale-location",
        f"Scale-location plot of {name}: the square root of the absolute studentized residuals against the "
        f"fitted values, {sample}; a trend means the error variance changes with the fitted value.",
        fig,
    )

    time = points.get("time")
    if time:
        fig, ax = figure()
        ax.axhline(0.0, color=REFERENCE, linewidth=0.8)
        ax.plot(time["position"], time["resid"], color=POINT, linewidth=0.7, marker="o", markersize=1.6)
        ax.set_xlabel(f"observation in time order (by {time['order_by'].strip('`')})", fontsize=9)
        ax.set_ylabel("residual", fontsize=9)
        ax.set_title("Residuals in time order", fontsize=9)
        finish(
            "time",
            "Residuals in time order",
            f"Line plot of the residuals of {name} in time order from {time['first']} to {time['last']}, "
            f"{ranked}; runs of residuals on one side of zero suggest serial correlation.",
            fig,
        )
    return out
