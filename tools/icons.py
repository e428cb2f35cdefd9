#!/usr/bin/env python3
"""Draw Rectifield's app icons (our own design): a deep-green square with a
white six-pulse bus ripple riding above a pale bus line.  Writes
www/icons/icon-192.png and icon-512.png (full-bleed, safe for maskable use)
with the standard library only.  Run once; the PNGs are committed."""
import math
import os
import struct
import zlib

BG = (0x1F, 0x51, 0x30)
FG = (0xFF, 0xFF, 0xFF)
BAR = (0xE3, 0xEE, 0xE5)
AMBER = (0xFF, 0xD1, 0x66)


def ripple(x):
    # x in [0.2, 0.8]: three humps of |cos|, the tops of a rectified wave.
    u = (x - 0.2) / 0.6 * 3.0
    return 0.40 - 0.10 * abs(math.cos(math.pi * (u - math.floor(u) - 0.5)))


def ripple_slope(x, h=1e-4):
    return (ripple(x + h) - ripple(x - h)) / (2 * h)


def colour_at(x, y):
    c = BG
    # bus line (pale) and a small amber warning bolt mark below it
    if 0.2 <= x <= 0.8 and abs(y - 0.62) < 0.028:
        c = BAR
    if 0.2 <= x <= 0.8:
        d = abs(y - ripple(x)) / math.sqrt(1 + ripple_slope(x) ** 2)
        if d < 0.035:
            c = FG
    # amber triangle (caution) centred at (0.5, 0.76)
    if 0.68 < y < 0.84 and abs(x - 0.5) < (y - 0.68) * 0.6:
        c = AMBER
    return c


def render(size, ss=3):
    rows = []
    for j in range(size):
        row = bytearray([0])
        for i in range(size):
            acc = [0, 0, 0]
            for a in range(ss):
                for b in range(ss):
                    c = colour_at((i + (a + 0.5) / ss) / size, (j + (b + 0.5) / ss) / size)
                    acc[0] += c[0]
                    acc[1] += c[1]
                    acc[2] += c[2]
            n = ss * ss
            row += bytes((acc[0] // n, acc[1] // n, acc[2] // n))
        rows.append(bytes(row))
    return b"".join(rows)


def png(size, raw):
    def chunk(t, d):
        return struct.pack(">I", len(d)) + t + d + struct.pack(">I", zlib.crc32(t + d) & 0xFFFFFFFF)

    ihdr = struct.pack(">IIBBBBB", size, size, 8, 2, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b"")


if __name__ == "__main__":
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "www", "icons")
    os.makedirs(out, exist_ok=True)
    for s in (192, 512):
        with open(os.path.join(out, f"icon-{s}.png"), "wb") as f:
            f.write(png(s, render(s, 3 if s <= 192 else 2)))
