"""A tiny stdlib PNG reader for tests: size and pixel rows of 8-bit, non-interlaced RGB/RGBA/grey PNGs.

Follows the PNG specification (W3C PNG 2nd ed. §7.3 scanline filters 0-4, §9.4 Paeth predictor;
from memory).
"""

from __future__ import annotations

import struct
import zlib

_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_CHANNELS = {0: 1, 2: 3, 4: 2, 6: 4}


def png_size(data: bytes) -> tuple[int, int]:
    if data[:8] != _SIGNATURE or data[12:16] != b"IHDR":
        raise ValueError("not a PNG file (bad signature or missing IHDR)")
    return struct.unpack(">II", data[16:24])


def png_rows(data: bytes) -> tuple[int, int, int, list[bytes]]:
    """(width, height, bytes per pixel, unfiltered rows)."""
    width, height = png_size(data)
    bit_depth, colour_type, _, _, interlace = data[24:29]
    if bit_depth != 8 or colour_type not in _CHANNELS or interlace:
        raise ValueError(f"unsupported PNG: depth {bit_depth}, colour type {colour_type}, interlace {interlace}")
    bpp = _CHANNELS[colour_type]
    idat, pos = bytearray(), 8
    while pos < len(data):
        (n,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        if kind == b"IDAT":
            idat += data[pos + 8:pos + 8 + n]
        pos += 12 + n
    raw = zlib.decompress(bytes(idat))
    stride = width * bpp
    if len(raw) != height * (stride + 1):
        raise ValueError(f"PNG data length {len(raw)} does not match {width}x{height}x{bpp}")
    rows: list[bytes] = []
    prev = bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        ftype = raw[start]
        cur = bytearray(raw[start + 1:start + 1 + stride])
        if ftype == 1:
            for i in range(bpp, stride):
                cur[i] = (cur[i] + cur[i - bpp]) & 0xFF
        elif ftype == 2:
            cur = bytearray((a + b) & 0xFF for a, b in zip(cur, prev, strict=True))
        elif ftype == 3:
            for i in range(stride):
                left = cur[i - bpp] if i >= bpp else 0
                cur[i] = (cur[i] + ((left + prev[i]) >> 1)) & 0xFF
        elif ftype == 4:
            for i in range(stride):
                a = cur[i - bpp] if i >= bpp else 0
                b = prev[i]
                c = prev[i - bpp] if i >= bpp else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else b if pb <= pc else c
                cur[i] = (cur[i] + pred) & 0xFF
        elif ftype != 0:
            raise ValueError(f"row {y}: unknown PNG filter type {ftype}")
        rows.append(bytes(cur))
        prev = cur
    return width, height, bpp, rows


def distinct_colours(data: bytes, *, limit: int = 64) -> int:
    """Number of distinct pixel values (counting stops at `limit`)."""
    width, _, bpp, rows = png_rows(data)
    seen: set[bytes] = set()
    for row in rows:
        for x in range(0, width * bpp, bpp):
            seen.add(row[x:x + bpp])
        if len(seen) >= limit:
            break
    return len(seen)
