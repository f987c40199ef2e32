#!/usr/bin/python3
"""Loads the chart sample page in headless Chromium, saves a screenshot and
checks that the browser drew the charts.

  screenshot_check.py PAGE.html OUT.png

Two runs of Debian's chromium, each with a fresh profile: --dump-dom (every
chart's <svg> id must be in the DOM Chromium built) and --screenshot. The
PNG is decoded with zlib alone (no imaging library) and must not be blank:
many distinct colours, a good share of pixels off the background, and the
Okabe-Ito fills of the charts present (sky blue bars, bluish green steady
bars, vermilion drifting bars), which shows the SVG was painted, not just
the page around it.
"""
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from check_charts import EXPECTED  # noqa: E402  the chart ids of the page

WIDTH, HEIGHT = 1400, 2300
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
         "--no-first-run", "--disable-background-networking",
         "--disable-component-update", "--disable-sync",
         "--hide-scrollbars", "--force-device-scale-factor=1"]
# Okabe-Ito colours (daemon/charts/palette.h) that fill large areas.
FILLS = {"sky blue": (0x56, 0xB4, 0xE9), "bluish green": (0x00, 0x9E, 0x73),
         "vermilion": (0xD5, 0x5E, 0x00)}


def chromium(extra, url):
    browser = shutil.which("chromium")
    if browser is None:
        sys.exit("chromium not found: run ops/setup (package chromium)")
    with tempfile.TemporaryDirectory(prefix="plumbline-chromium-") as profile:
        return subprocess.run(
            [browser, *FLAGS, f"--user-data-dir={profile}", *extra, url],
            capture_output=True, text=True, timeout=90, check=True).stdout


def paeth(a, b, c):
    p = a + b - c
    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
    if pa <= pb and pa <= pc:
        return a
    return b if pb <= pc else c


def read_png(path):
    """(width, height, rows of RGB tuples) of an 8-bit RGB or RGBA PNG."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError(f"{path} is not a PNG")
    pos, idat, header = 8, b"", None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    width, height, depth, colour, _, _, interlace = header
    if depth != 8 or colour not in (2, 6) or interlace != 0:
        raise ValueError(f"unexpected PNG format {header}")
    channels = 3 if colour == 2 else 4
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, previous = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        kind, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = previous[i]
            c = previous[i - channels] if i >= channels else 0
            if kind == 1:
                line[i] = (line[i] + a) & 0xFF
            elif kind == 2:
                line[i] = (line[i] + b) & 0xFF
            elif kind == 3:
                line[i] = (line[i] + (a + b) // 2) & 0xFF
            elif kind == 4:
                line[i] = (line[i] + paeth(a, b, c)) & 0xFF
        rows.append(line)
        previous = line
    return width, height, rows, channels


def main():
    page, png = os.path.abspath(sys.argv[1]), sys.argv[2]
    url = "file://" + page
    dom = chromium(["--dump-dom"], url)
    missing = [i for i in EXPECTED if f'id="{i}"' not in dom]
    if missing:
        sys.exit(f"charts missing from Chromium's DOM: {missing}")
    if os.path.exists(png):
        os.remove(png)
    chromium([f"--screenshot={os.path.abspath(png)}",
              f"--window-size={WIDTH},{HEIGHT}"], url)
    width, height, rows, channels = read_png(png)
    counts = {}
    for line in rows[::2]:  # every other row is plenty
        for x in range(0, width * channels, channels * 2):
            pixel = bytes(line[x:x + 3])
            counts[pixel] = counts.get(pixel, 0) + 1
    total = sum(counts.values())
    background, most = max(counts.items(), key=lambda kv: kv[1])
    off_background = 1 - most / total
    problems = []
    if len(counts) < 50:
        problems.append(f"only {len(counts)} distinct colours")
    if off_background < 0.2:
        problems.append(f"only {off_background:.1%} of pixels off the "
                        f"background {background.hex()}")
    for name, rgb in FILLS.items():
        near = sum(n for p, n in counts.items()
                   if max(abs(p[i] - rgb[i]) for i in range(3)) <= 4)
        if near < 50:
            problems.append(f"{name} fill {bytes(rgb).hex()} not painted "
                            f"({near} sampled pixels)")
    print(f"{png}: {width}x{height}, {len(counts)} colours, "
          f"{off_background:.1%} off the background")
    if problems:
        sys.exit("; ".join(problems))


if __name__ == "__main__":
    main()
