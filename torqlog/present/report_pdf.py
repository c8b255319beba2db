"""The report as a typeset PDF, drawn with reportlab from the same document as the HTML.

:func:`write_pdf` lays out :func:`torqlog.present.report.document`: page one (the verdict table
and the caution block), then each section on a new page with its paragraphs, the profile
lines to paste, labelled tables and figures, and the appendix; a running footer carries
the machine and "page n of N". Text is set in DejaVu Sans, the TrueType font that ships
with matplotlib, so Δ, ω̄, ² and · print on any machine with no system fonts installed.

reportlab is pure pip (wheels for every platform, no browser or system library), which is
why it draws the PDF rather than an HTML-to-PDF converter that needs a browser engine or
Pango/Cairo from the operating system.

References
----------
.. [1] ReportLab Inc., *ReportLab PDF Library User Guide*, ch. 5 (PLATYPUS flowables,
   paragraphs, tables) and ch. 3 (TrueType fonts).
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

#: Colour-blind-safe colours (Okabe & Ito): pass, fail, neutral.
_COLOURS = {"pass": "#0072B2", "fail": "#D55E00", "marginal": "#B07800", "info": "#5b6770",
            "not assessed": "#5b6770"}
_WORDS = {"pass": "PASS", "fail": "FAIL", "marginal": "MARGINAL", "info": "NOTE",
          "not assessed": "NOT ASSESSED"}
_PAGES = {"a4": (595.2755905511812, 841.8897637795277), "letter": (612.0, 792.0)}


def _fonts() -> tuple[str, str, str]:
    """Register DejaVu Sans (regular, bold, mono) from matplotlib's font folder."""
    import matplotlib
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    names = (("TorqSans", "DejaVuSans.ttf"), ("TorqSans-Bold", "DejaVuSans-Bold.ttf"),
             ("TorqMono", "DejaVuSansMono.ttf"))
    for name, file in names:
        if name not in pdfmetrics.getRegisteredFontNames():
            pdfmetrics.registerFont(TTFont(name, str(folder / file)))
    pdfmetrics.registerFontFamily("TorqSans", normal="TorqSans", bold="TorqSans-Bold",
                                  italic="TorqSans", boldItalic="TorqSans-Bold")
    return "TorqSans", "TorqSans-Bold", "TorqMono"


def _styles() -> dict[str, Any]:
    from reportlab.lib import colors
    from reportlab.lib.styles import ParagraphStyle

    sans, bold, mono = _fonts()
    blue = colors.HexColor("#0072B2")
    return {
        "title": ParagraphStyle("title", fontName=bold, fontSize=17, leading=21,
                                textColor=blue, spaceAfter=2),
        "sub": ParagraphStyle("sub", fontName=sans, fontSize=8.5, leading=11,
                              textColor=colors.HexColor("#5b6770"), spaceAfter=8),
        "h2": ParagraphStyle("h2", fontName=bold, fontSize=13, leading=16, textColor=blue,
                             spaceBefore=8, spaceAfter=5),
        "body": ParagraphStyle("body", fontName=sans, fontSize=9.5, leading=13,
                               spaceAfter=5),
        "cell": ParagraphStyle("cell", fontName=sans, fontSize=8, leading=10),
        "cellb": ParagraphStyle("cellb", fontName=bold, fontSize=8, leading=10),
        "small": ParagraphStyle("small", fontName=sans, fontSize=7, leading=8.6),
        "caption": ParagraphStyle("caption", fontName=bold, fontSize=8.5, leading=11,
                                  spaceBefore=4, spaceAfter=2),
        "figcap": ParagraphStyle("figcap", fontName=sans, fontSize=8, leading=10,
                                 textColor=colors.HexColor("#5b6770"), spaceAfter=8),
        "note": ParagraphStyle("note", fontName=sans, fontSize=8.5, leading=11,
                               leftIndent=6, borderPadding=(3, 4, 3, 6),
                               backColor=colors.HexColor("#fdf6ea"), spaceBefore=3,
                               spaceAfter=6),
        "caution": ParagraphStyle("caution", fontName=sans, fontSize=9, leading=12,
                                  spaceAfter=4, bulletIndent=0, leftIndent=10),
        "pre": ParagraphStyle("pre", fontName=mono, fontSize=7.5, leading=9.4,
                              backColor=colors.HexColor("#f5f7f8"), borderPadding=3,
                              spaceAfter=6),
    }


def _text(parts: Any) -> str:
    """Paragraph markup of text and cells (numbers bold), escaped."""
    out = []
    for p in parts:
        if hasattr(p, "text") and hasattr(p, "stage"):  # a report Cell
            out.append(f"<b>{escape(p.text)}</b>")
        else:
            out.append(escape(str(p)))
    return "".join(out)


def _verdict_cell(v: str, st: dict[str, Any]) -> Any:
    from reportlab.platypus import Paragraph

    colour = _COLOURS.get(v, "#5b6770")
    return Paragraph(f'<font color="{colour}"><b>{_WORDS.get(v, escape(v.upper()))}</b></font>',
                     st["cellb"])


def _table(t: Any, st: dict[str, Any], width: float) -> list[Any]:
    from reportlab.lib import colors
    from reportlab.platypus import Paragraph, Table, TableStyle

    small = len(t.header) > 5
    cs = st["small"] if small else st["cell"]
    head = [Paragraph(f"<b>{escape(h)}</b>", cs) for h in t.header]
    rows = [head]
    for row in t.rows:
        cells = []
        for i, c in enumerate(row):
            if c.verdict:
                cells.append(_verdict_cell(c.verdict, st))
            else:
                cells.append(Paragraph(escape(c.text), cs if i else
                                       (st["small"] if small else st["cellb"])))
        rows.append(cells)
    n = len(t.header)
    # a header wraps at its spaces, so its longest word counts, not its whole length
    lengths = [max(max(map(len, h.split() or [""])), *(len(r[i].text) for r in t.rows))
               if t.rows else len(h) for i, h in enumerate(t.header)]
    lengths = [min(max(v, 6), 60) + 2 for v in lengths]  # + the cell padding
    total = float(sum(lengths))
    widths = [width * v / total for v in lengths] if n > 1 else [width]
    table = Table(rows, colWidths=widths, repeatRows=1, hAlign="LEFT")
    table.setStyle(TableStyle([
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#eef4f8")),
        ("LINEBELOW", (0, 0), (-1, 0), 1.0, colors.HexColor("#56B4E9")),
        ("LINEBELOW", (0, 1), (-1, -1), 0.4, colors.HexColor("#d9dde0")),
        ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
    ]))
    return [Paragraph(escape(t.caption), st["caption"]), table]


def _figure(f: Any, st: dict[str, Any], width: float, height: float) -> Any:
    from PIL import Image as PILImage  # pillow: a matplotlib dependency
    from reportlab.lib.utils import ImageReader
    from reportlab.platypus import Image, KeepTogether, Paragraph

    with PILImage.open(io.BytesIO(f.png)) as pic:  # flatten alpha: one image per figure
        buf = io.BytesIO()
        pic.convert("RGB").save(buf, format="PNG")
    w_px, h_px = ImageReader(io.BytesIO(buf.getvalue())).getSize()
    w = width
    h = w * h_px / w_px
    if h > height:
        w, h = w * height / h, height
    img = Image(io.BytesIO(buf.getvalue()), width=w, height=h)
    return KeepTogether([img, Paragraph(f"<b>{escape(f.title)}.</b> {escape(f.caption)}",
                                        st["figcap"])])


def _story(doc: Any, st: dict[str, Any], width: float, height: float) -> list[Any]:
    from reportlab.lib import colors
    from reportlab.platypus import PageBreak, Paragraph, Preformatted, Spacer, Table, TableStyle

    story: list[Any] = [Paragraph(escape(doc.title), st["title"]),
                        Paragraph(escape(doc.subtitle), st["sub"]),
                        Paragraph('<a name="verdict"/>Verdict', st["h2"])]
    rows = [[Paragraph("<b>Question</b>", st["cell"]), Paragraph("<b>Answer</b>", st["cell"]),
             Paragraph("<b>Verdict</b>", st["cell"])]]
    for f in doc.findings:
        rows.append([Paragraph(escape(f.question), st["cellb"]),
                     Paragraph(_text(f.answer) + f' <a href="#{f.link}" color="#0072B2">'
                               "Details</a>", st["cell"]),
                     _verdict_cell(f.verdict, st)])
    verdicts = Table(rows, colWidths=[width * 0.24, width * 0.6, width * 0.16], repeatRows=1,
                     hAlign="LEFT")
    verdicts.setStyle(TableStyle([
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#eef4f8")),
        ("LINEBELOW", (0, 0), (-1, -1), 0.4, colors.HexColor("#d9dde0")),
        ("TOPPADDING", (0, 0), (-1, -1), 3), ("BOTTOMPADDING", (0, 0), (-1, -1), 3)]))
    story.append(verdicts)
    items = [Paragraph('<a name="cautions"/><font color="#D55E00"><b>Cautions</b></font>',
                       st["h2"])]
    for c in doc.cautions:
        text = escape(c.text)
        if c.topic == "burst":
            text = f"<b>{text}</b>"
        items.append(Paragraph(f"{text} <i>Defer to: {escape(c.basis)}.</i>", st["caution"],
                               bulletText="•"))
    box = Table([[items]], colWidths=[width], hAlign="LEFT")
    box.setStyle(TableStyle([("BOX", (0, 0), (-1, -1), 1.8, colors.HexColor("#D55E00")),
                             ("LEFTPADDING", (0, 0), (-1, -1), 8),
                             ("RIGHTPADDING", (0, 0), (-1, -1), 8)]))
    story += [Spacer(1, 8), box]
    for s in doc.sections:
        story += [PageBreak(), Paragraph(f'<a name="{s.id}"/>{escape(s.title)}', st["h2"])]
        story += [Paragraph(_text(p), st["body"]) for p in s.paragraphs]
        for a in s.advice:
            story += [Paragraph(escape(a.text), st["body"]), Preformatted(a.toml, st["pre"])]
        story += [Paragraph(escape(n), st["note"]) for n in s.notes]
        for t in s.tables:
            story += _table(t, st, width)
        story += [_figure(f, st, width, height * 0.8) for f in s.figures]
        if s.pre:
            story.append(Preformatted(s.pre, st["pre"], maxLineLength=110))
    return story


def write_pdf(doc: Any, path: str | Path, page: str = "a4") -> Path:
    """Write a :class:`torqlog.present.report.Document` as a typeset PDF.

    Parameters
    ----------
    doc : Document
        From :func:`torqlog.present.report.document`.
    path : str or Path
    page : {"a4", "letter"}
        Paper size.

    Returns
    -------
    Path
    """
    from reportlab.lib.units import mm
    from reportlab.pdfgen.canvas import Canvas
    from reportlab.platypus import SimpleDocTemplate

    st = _styles()
    size = _PAGES[page]
    margin = 15 * mm
    footer = doc.title

    class _Numbered(Canvas):
        """Canvas that writes "page n of N" once the page count is known."""

        def __init__(self, *args: Any, **kwargs: Any) -> None:
            super().__init__(*args, **kwargs)
            self._pages: list[dict[str, Any]] = []

        def showPage(self) -> None:  # noqa: N802 - reportlab's name
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            n = len(self._pages)
            for state in self._pages:
                self.__dict__.update(state)
                self.setFont("TorqSans", 7.5)
                self.setFillColorRGB(0.36, 0.40, 0.44)
                self.drawString(margin, 9 * mm, footer[:110])
                self.drawRightString(size[0] - margin, 9 * mm,
                                     f"page {self._pageNumber} of {n}")
                super().showPage()
            super().save()

    from torqlog.io.outputs import atomic_path

    p = Path(path)
    with atomic_path(p) as tmp:  # the PDF appears whole or not at all
        template = SimpleDocTemplate(str(tmp), pagesize=size, leftMargin=margin,
                                     rightMargin=margin, topMargin=14 * mm,
                                     bottomMargin=16 * mm, title=doc.title, author="torqlog",
                                     creator="torqlog")
        template.build(_story(doc, st, template.width, template.height),
                       canvasmaker=_Numbered)
    return p


__all__ = ["write_pdf"]
