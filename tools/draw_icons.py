"""Draws the web app's icons (a battery with a check mark) as PNG files, with nothing but zlib.

Run `python -m tools.draw_icons` to redraw fleetcare/tablet/static/icons/fleetcare-192.png and -512.png.
"""
import struct
import zlib
from pathlib import Path

DARK = (33, 37, 41)
GREEN = (25, 135, 84)
WHITE = (255, 255, 255)
OUT = Path(__file__).resolve().parent.parent / "fleetcare" / "tablet" / "static" / "icons"


def _inside(x, y, left, top, right, bottom):
    return left <= x < right and top <= y < bottom


def pixel(x, y, size):
    """Colour at (x, y): dark square, white battery outline with its terminal, green fill, white check."""
    u, v = x / size, y / size
    if not _inside(u, v, 0.0, 0.0, 1.0, 1.0):
        return DARK
    body = _inside(u, v, 0.18, 0.28, 0.82, 0.82)
    inner = _inside(u, v, 0.23, 0.33, 0.77, 0.77)
    terminal = _inside(u, v, 0.40, 0.20, 0.60, 0.28)
    if terminal or (body and not inner):
        return WHITE
    if inner:
        # A check mark: two thick strokes.
        d1 = abs((v - 0.58) - (u - 0.36)) < 0.05 and 0.32 <= u <= 0.46
        d2 = abs((v - 0.68) + (u - 0.46)) < 0.05 and 0.44 <= u <= 0.68
        return WHITE if d1 or d2 else GREEN
    return DARK


def png(size):
    rows = b"".join(b"\x00" + bytes(c for x in range(size) for c in pixel(x, y, size)) for y in range(size))

    def chunk(kind, data):
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)

    header = struct.pack(">IIBBBBB", size, size, 8, 2, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header) + chunk(b"IDAT", zlib.compress(rows, 9)) + chunk(b"IEND", b"")


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    for size in (192, 512):
        (OUT / f"fleetcare-{size}.png").write_bytes(png(size))


if __name__ == "__main__":
    main()
