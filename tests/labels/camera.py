"""A fake camera for chromium: a label image turned into a Y4M video file.

Chromium plays the file in a loop as the camera when started with --use-fake-device-for-media-stream
--use-file-for-fake-video-capture=FILE.y4m. Y4M is a plain header, then per frame "FRAME\\n" and the
Y, U and V planes (4:2:0, so U and V at half width and height), here in BT.601 full range (C420jpeg).
"""
import io
import subprocess

import numpy as np
from PIL import Image

WIDTH, HEIGHT = 640, 480


def label_image(pdf, dpi=150):
    """The first page of a label PDF as an RGB image, drawn by poppler's pdftoppm."""
    png = subprocess.run(["pdftoppm", "-r", str(dpi), "-png", "-singlefile", "-"], input=pdf, capture_output=True,
                         check=True).stdout
    return Image.open(io.BytesIO(png)).convert("RGB")


def camera_frame(image):
    """The label as a camera would see it held at arm's length: on a grey bench, filling most of the picture."""
    frame = Image.new("RGB", (WIDTH, HEIGHT), (128, 128, 120))
    scale = min((WIDTH - 60) / image.width, (HEIGHT - 60) / image.height)
    label = image.resize((round(image.width * scale), round(image.height * scale)), Image.Resampling.LANCZOS)
    frame.paste(label, ((WIDTH - label.width) // 2, (HEIGHT - label.height) // 2))
    return frame


def write_y4m(frame, path, frames=3, fps=10):
    rgb = np.asarray(frame, dtype=np.float32)
    r, g, b = rgb[..., 0], rgb[..., 1], rgb[..., 2]
    y = 0.299 * r + 0.587 * g + 0.114 * b
    u = 128 - 0.168736 * r - 0.331264 * g + 0.5 * b
    v = 128 + 0.5 * r - 0.418688 * g - 0.081312 * b

    def plane(values, half=False):
        if half:
            values = values.reshape(HEIGHT // 2, 2, WIDTH // 2, 2).mean(axis=(1, 3))
        return np.clip(np.rint(values), 0, 255).astype(np.uint8).tobytes()

    body = b"FRAME\n" + plane(y) + plane(u, half=True) + plane(v, half=True)
    with open(path, "wb") as out:
        out.write(f"YUV4MPEG2 W{WIDTH} H{HEIGHT} F{fps}:1 Ip A1:1 C420jpeg\n".encode())
        for _ in range(frames):
            out.write(body)
    return path
