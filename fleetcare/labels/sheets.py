"""Printed battery labels as a PDF: a QR code of the battery's address in FleetCare, the serial in large
type, the profile, the site and a caution line.

reportlab draws the PDF (vector text and QR modules, fonts embedded from its own package: nothing is
fetched); segno makes the QR code. Both are plain Python with no system library, so the page and
`manage.py labels` make the same bytes on any machine. Knows nothing of requests or the database: it
takes Label records.
"""
import io
from dataclasses import dataclass
from pathlib import Path

import reportlab
import segno
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.units import inch, mm
from reportlab.lib.utils import simpleSplit
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen import canvas

# Short on purpose: a label has room for one line. The full cautions (templates/partials/cautions.html) are on
# the entry screens; these say the same in brief, the sealed one without acid or watering.
CAUTION = "Acid burns: face shield, gloves. Charging gives off explosive hydrogen: no flames or sparks."
SEALED_CAUTION = "Sealed: never add water or open the valves. Overcharging gives off explosive hydrogen: no flames or sparks."

# Bitstream Vera, shipped inside reportlab: embedded, so every printer shows the same letters.
_FONTS = Path(reportlab.__file__).parent / "fonts"
REGULAR, BOLD = "FleetCareLabel", "FleetCareLabel-Bold"


def _register_fonts():
    if REGULAR not in pdfmetrics.getRegisteredFontNames():
        pdfmetrics.registerFont(TTFont(REGULAR, str(_FONTS / "Vera.ttf")))
        pdfmetrics.registerFont(TTFont(BOLD, str(_FONTS / "VeraBd.ttf")))


@dataclass(frozen=True)
class Label:
    serial: str
    profile: str  # "24 cells · 48 V · 775 Ah"
    site: str
    url: str  # what the QR code holds
    sealed: bool = False


@dataclass(frozen=True)
class Layout:
    """A page of labels: columns × rows of label_w × label_h (points), from the top-left margin, with gaps."""

    key: str
    name: str
    page: tuple
    columns: int
    rows: int
    label_w: float
    label_h: float
    left: float
    top: float
    gap_x: float = 0
    gap_y: float = 0

    @property
    def per_page(self):
        return self.columns * self.rows

    def origin(self, index):
        """Bottom-left corner of the label at `index` on its page (PDF coordinates start bottom-left)."""
        column, row = index % self.columns, index // self.columns
        x = self.left + column * (self.label_w + self.gap_x)
        y = self.page[1] - self.top - (row + 1) * self.label_h - row * self.gap_y
        return x, y


# Our own choice of grids, both common sheet sizes sold by label makers: A4 with 8 labels of
# 99.1 × 67.7 mm (2 × 4), US Letter with 10 labels of 4 × 2 in (2 × 5); and one 100 × 62 mm label per
# page for label printers (62 mm is a common roll width).
LAYOUTS = {
    layout.key: layout for layout in (
        Layout("a4", "A4 sheet, 8 labels of 99 × 68 mm", A4, 2, 4, 99.1 * mm, 67.7 * mm,
               left=4.65 * mm, top=13.1 * mm, gap_x=2.5 * mm),
        Layout("letter", "US Letter sheet, 10 labels of 4 × 2 in", LETTER, 2, 5, 4 * inch, 2 * inch,
               left=0.15625 * inch, top=0.5 * inch, gap_x=0.1875 * inch),
        Layout("single", "One 100 × 62 mm label per page (label printer)", (100 * mm, 62 * mm), 1, 1,
               100 * mm, 62 * mm, left=0, top=0),
    )
}


def label_sheet(labels, layout_key="a4", title="FleetCare labels"):
    """The PDF (bytes) with one label per battery, in the order given, filling each page row by row."""
    _register_fonts()
    layout = LAYOUTS[layout_key]
    out = io.BytesIO()
    pdf = canvas.Canvas(out, pagesize=layout.page, pageCompression=1, invariant=1)
    pdf.setTitle(title)
    pdf.setAuthor("FleetCare")
    for index, label in enumerate(labels):
        if index and index % layout.per_page == 0:
            pdf.showPage()
        x, y = layout.origin(index % layout.per_page)
        draw_label(pdf, label, x, y, layout.label_w, layout.label_h)
    if not labels:
        pdf.setFont(REGULAR, 10)
        pdf.drawString(10 * mm, layout.page[1] - 15 * mm, "No batteries to label.")
    pdf.showPage()
    pdf.save()
    return out.getvalue()


def draw_label(pdf, label, x, y, width, height):
    pad = 3.5 * mm
    qr_size = min(height - 2 * pad, width * 0.46)
    draw_qr(pdf, label.url, x + pad, y + (height - qr_size) / 2, qr_size)
    text_x = x + pad + qr_size + 2.5 * mm
    text_w = x + width - pad - text_x
    top = y + height - pad

    serial_size = _fitting_size(label.serial, BOLD, text_w, largest=30, smallest=10)
    top -= serial_size * 0.9
    pdf.setFont(BOLD, serial_size)
    pdf.drawString(text_x, top, label.serial)

    top -= 5 * mm
    for text, font, size in ((label.profile, REGULAR, 9), (label.site, REGULAR, 9)):
        for line in simpleSplit(text, font, size, text_w)[:2]:
            pdf.setFont(font, size)
            pdf.drawString(text_x, top, line)
            top -= size * 1.25

    caution = simpleSplit(SEALED_CAUTION if label.sealed else CAUTION, BOLD, 6.5, text_w)
    line_y = y + pad + (len(caution) - 1) * 6.5 * 1.2
    for line in caution:
        pdf.setFont(BOLD, 6.5)
        pdf.drawString(text_x, line_y, line)
        line_y -= 6.5 * 1.2


def draw_qr(pdf, content, x, y, size):
    """The QR code with its quiet zone (4 modules) inside a size × size square; dark runs as filled rectangles.

    Error correction H (30 % of the code may be lost): labels on battery trays get acid, dirt and scratches."""
    code = segno.make_qr(content, error="h", boost_error=False)
    border = 4
    rows = list(code.matrix_iter(scale=1, border=border))
    module = size / len(rows)
    pdf.setFillColorRGB(1, 1, 1)
    pdf.rect(x, y, size, size, stroke=0, fill=1)
    pdf.setFillColorRGB(0, 0, 0)
    for r, row in enumerate(rows):
        c = 0
        while c < len(row):
            if row[c]:
                start = c
                while c < len(row) and row[c]:
                    c += 1
                pdf.rect(x + start * module, y + size - (r + 1) * module, (c - start) * module, module, stroke=0, fill=1)
            else:
                c += 1


def _fitting_size(text, font, width, largest, smallest):
    size = largest
    while size > smallest and pdfmetrics.stringWidth(text, font, size) > width:
        size -= 0.5
    return size
