"""The pieces every HTML report is made of: page, tables, plots, cautions.

Reports are one self-contained file each: the styles are inline, every plot
is an inline SVG (text drawn as paths, so no font is needed), and nothing
refers to a network resource. With a plots folder each plot is also written
as PNG and SVG files. No report overwrites its inputs.
"""

from __future__ import annotations

import html
import math
import os
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .. import __version__
from ..errors import SpecError
from .files import check_output_path, write_text
from .plots import figure_svg, save_figure

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["CAUTION", "POWER_CAUTION", "STYLE", "ReportFiles", "Plots", "inline_svg", "escape",
           "table", "paragraph", "page", "spec_block", "caution_block", "number_or_dash",
           "prepare_outputs", "finish_report"]

#: The closing caution of every report.
CAUTION = ("These values are a starting point: confirm the design by simulation and on the "
           "bench. Equipment connected to mains, or used where a failure can hurt someone, "
           "must follow its applicable safety standards and licensed practice.")
#: The extra caution of a loop report.
POWER_CAUTION = ("Power converters can hurt people: they store energy in inductors and "
                 "capacitors, often work from mains or high voltages, and an unstable loop can "
                 "destroy parts. Check the loop on the real converter (for example with a "
                 "network analyser injection measurement) before it carries power unattended.")

STYLE = """
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; margin: 2em auto;
       max-width: 60em; padding: 0 1em; color: #222; line-height: 1.45; }
h1 { font-size: 1.6em; border-bottom: 2px solid #36c; padding-bottom: .2em; }
h2 { font-size: 1.25em; margin-top: 1.8em; border-bottom: 1px solid #ccc; }
h3 { font-size: 1.05em; }
table { border-collapse: collapse; margin: .6em 0 1em; font-size: .92em; }
th, td { border: 1px solid #ccc; padding: .25em .6em; text-align: left; vertical-align: top; }
th { background: #eef2f8; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
pre { background: #f6f6f6; border: 1px solid #ddd; padding: .7em; overflow-x: auto; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; }
figcaption { font-size: .9em; color: #555; }
.caution { border: 2px solid #c60; background: #fff6ec; padding: .6em 1em; }
.note { color: #555; font-size: .92em; }
"""


@dataclass(frozen=True)
class ReportFiles:
    """What a report writer wrote: the HTML file and the plot files.

    ``html_text`` is the page itself, also when no file was asked for.
    """

    html: Path | None
    plots: tuple[Path, ...]
    html_text: str = ""


def inline_svg(svg: str, prefix: str) -> str:
    """An SVG document made fit to sit inside HTML next to other SVGs.

    The XML prolog, the DOCTYPE and the namespace declarations go (the
    HTML parser puts ``<svg>`` in the SVG namespace itself), and every id
    and reference to an id gets `prefix`, so two plots never share an id.

    Examples
    --------
    >>> inline_svg('<?xml version="1.0"?>\\n<svg xmlns="http://www.w3.org/2000/svg">'
    ...            '<path id="a"/><use xlink:href="#a"/></svg>', "p1-")
    '<svg><path id="p1-a"/><use xlink:href="#p1-a"/></svg>'
    """
    text = re.sub(r"<\?xml[^>]*\?>\s*", "", svg)
    text = re.sub(r"<!DOCTYPE[^>]*>\s*", "", text)
    text = re.sub(r'\s+xmlns(:\w+)?="[^"]*"', "", text)
    text = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}{m.group(1)}"', text)
    text = re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}{m.group(1)}"', text)
    text = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{prefix}{m.group(1)})", text)
    return text.strip()


# -- small HTML pieces ---------------------------------------------------------

def escape(text: object) -> str:
    return html.escape(str(text), quote=True)


def table(headers: Iterable[object], rows: Iterable[Sequence[object]], *,
          numeric_from: int = 1) -> str:
    """An HTML table; cells from column `numeric_from` on are right-aligned."""
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = "".join(
            f'<td class="n">{escape(c)}</td>' if i >= numeric_from else f"<td>{escape(c)}</td>"
            for i, c in enumerate(row))
        body.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def paragraph(text: object, cls: str | None = None) -> str:
    return f'<p class="{cls}">{escape(text)}</p>' if cls else f"<p>{escape(text)}</p>"


def page(title: str, parts: Iterable[str]) -> str:
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{escape(title)}</title>\n"
            f"<meta name=\"generator\" content=\"placer {__version__}\">\n"
            f"<style>{STYLE}</style>\n</head>\n<body>\n" + "\n".join(parts)
            + "\n</body>\n</html>\n")


def spec_block(path: str | os.PathLike[str] | None, text: str | None = None) -> str:
    """The spec as the report shows it; `text` given, the file is not read."""
    if not path:
        return paragraph("(no spec file: the design was built in code)", "note")
    if text is None:
        try:
            text = Path(path).read_text(encoding="utf-8")
        except OSError as error:
            return paragraph(f"(the spec file {path} could not be read: {error})", "note")
    return f"<p>From <code>{escape(path)}</code>:</p>\n<pre>{escape(text)}</pre>"


def caution_block(extra: str | None = None) -> str:
    parts = ['<h2>Before you build it</h2>', '<div class="caution">', paragraph(CAUTION)]
    if extra:
        parts.append(paragraph(extra))
    parts.append("</div>")
    return "\n".join(parts)


def number_or_dash(x: Any, fmt: Callable[[Any], str]) -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) else fmt(x)


class Plots:
    """Turns figures into inline SVG blocks and, with a folder, into files."""

    def __init__(self, folder: str | os.PathLike[str] | None, inputs: Sequence[str]) -> None:
        self.folder = folder
        self.inputs = inputs
        self.written: list[Path] = []
        self.count = 0

    def block(self, stem: str, fig: Figure, caption: str) -> str:
        self.count += 1
        if self.folder is not None:
            self.written += save_figure(fig, self.folder, stem, inputs=self.inputs)
        svg = inline_svg(figure_svg(fig), f"p{self.count}-")
        svg = svg.replace("<svg", f'<svg role="img" aria-label="{escape(caption)}"', 1)
        return f"<figure>\n{svg}\n<figcaption>{escape(caption)}</figcaption>\n</figure>"


def prepare_outputs(html_path: str | os.PathLike[str] | None,
                    plots_dir: str | os.PathLike[str] | None,
                    inputs: Iterable[object]) -> tuple[str, ...]:
    """Check every output before any work; returns the inputs as a tuple."""
    checked = tuple(str(i) for i in inputs if i)
    if html_path is not None:
        check_output_path(html_path, inputs=checked, option="--report")
    if plots_dir is not None and not Path(plots_dir).is_dir():
        raise SpecError(f"--plots: folder {str(plots_dir)!r} does not exist")
    return checked


def finish_report(title: str, parts: Iterable[str], html_path: str | os.PathLike[str] | None,
                  plots: Plots, inputs: Sequence[str]) -> ReportFiles:
    written = None
    text = page(title, parts)
    if html_path is not None:
        written = write_text(html_path, text, inputs=inputs, option="--report")
    return ReportFiles(written, tuple(plots.written), text)
