"""The report as PDF through Qt: ``QTextDocument`` laid out on A4 and printed by ``QPdfWriter``.

The HTML is the same text as the HTML report (:func:`workbench.report_html.report_html`)
without the style block; the pictures are handed to the document as image
resources instead of ``data:`` URIs.  No dependency beyond Qt.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from workbench.report import ReportError, ReportInput
from workbench.report_html import report_html
from dsp.files import atomic_path

MARGIN_MM = 15.0
RESOLUTION_DPI = 96


@dataclass(frozen=True)
class PdfResult:
    """What :func:`write_pdf` wrote.

    Attributes
    ----------
    path : Path
    n_pages : int
        Pages of the laid-out document (what was printed).
    html : str
        The HTML text the document was built from.
    """

    path: Path
    n_pages: int
    html: str


def build_document(inp: ReportInput):
    """The ``QTextDocument`` of the report, with the pictures as resources, and its HTML."""
    from PySide6.QtCore import QUrl
    from PySide6.QtGui import QFont, QImage, QTextDocument

    doc = QTextDocument()
    font = QFont(doc.defaultFont())
    font.setPointSizeF(9.5)
    doc.setDefaultFont(font)
    doc.setDefaultStyleSheet("th { background-color: #E8E8E8; } p.caution { color: #5A3A00; } "
                             "h1 { font-size: 16pt; } h2 { font-size: 12.5pt; margin-top: 14px; } h3 { font-size: 11pt; }")
    for i, image in enumerate(inp.images):
        qimage = QImage.fromData(image.png, "PNG")
        if qimage.isNull():
            raise ReportError(f"the picture {image.title!r} is not a readable PNG; regenerate the snapshot")
        doc.addResource(QTextDocument.ResourceType.ImageResource, QUrl(f"figure{i}.png"), qimage)
    text = report_html(inp, image_src=lambda i, _image: f"figure{i}.png", standalone=False)
    doc.setHtml(text)
    return doc, text


def write_pdf(inp: ReportInput, path: str | Path) -> PdfResult:
    """Print the report to a PDF file (A4, 15 mm margins).

    The file is written beside the target under a temporary name and renamed when
    complete, so a failed print never leaves half a report under the real name.
    """
    from PySide6.QtCore import QMarginsF, QSizeF
    from PySide6.QtGui import QPageLayout, QPageSize, QPdfWriter

    path = Path(path)
    doc, text = build_document(inp)
    with atomic_path(path) as tmp:
        writer = QPdfWriter(tmp)
        writer.setResolution(RESOLUTION_DPI)
        writer.setPageSize(QPageSize(QPageSize.PageSizeId.A4))
        writer.setPageMargins(QMarginsF(MARGIN_MM, MARGIN_MM, MARGIN_MM, MARGIN_MM), QPageLayout.Unit.Millimeter)
        writer.setTitle(doc.metaInformation(doc.MetaInformation.DocumentTitle) or "gearbench report")
        writer.setCreator("gearbench")
        page = writer.pageLayout().paintRectPixels(RESOLUTION_DPI)
        doc.setPageSize(QSizeF(page.width(), page.height()))
        doc.print_(writer)
        n_pages = doc.pageCount()
        del writer   # finishes the file
    if not path.is_file() or path.stat().st_size == 0:
        raise ReportError(f"could not write {path}; check the folder is writable")
    return PdfResult(path=path, n_pages=n_pages, html=text)


__all__ = ["PdfResult", "build_document", "write_pdf"]
