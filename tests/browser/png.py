"""Reading the screenshots the browser tests save: a small PNG decoder on the standard library.

It follows the PNG specification (W3C Recommendation, Portable Network Graphics, 2nd edition, also
ISO/IEC 15948:2004): the 8-byte signature, chunks of length, type, data and CRC-32, the IHDR header,
the IDAT stream compressed with zlib, and the five per-row filters (section 9). It handles what
Chromium writes for a screenshot, 8-bit truecolour with or without alpha and no interlacing, and
refuses anything else by name rather than guessing.
"""

from __future__ import annotations

import struct
import zlib
from dataclasses import dataclass

SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2
CHANNELS = {2: 3, 6: 4}  # colour type -> samples per pixel: truecolour, truecolour with alpha (section 11.2.2)


@dataclass(frozen=True)
class Image:
    width: int
    height: int
    channels: int
    pixels: bytes  # rows of width * channels samples, unfiltered, top to bottom

    def colours(self, enough: int) -> int:
        """How many distinct pixel values the image has, counting no further than ``enough``."""
        step = self.channels
        seen: set[bytes] = set()
        row_bytes = self.width * step
        for top in range(0, len(self.pixels), row_bytes):
            row = self.pixels[top : top + row_bytes]
            seen.update(row[i : i + step] for i in range(0, row_bytes, step))
            if len(seen) >= enough:
                return enough
        return len(seen)


def _chunks(data: bytes) -> list[tuple[bytes, bytes]]:
    """The chunks of a PNG file as (type, data), each CRC checked (section 5.3)."""
    if not data.startswith(SIGNATURE):
        raise ValueError("not a PNG file: the signature is missing")
    chunks = []
    at = len(SIGNATURE)
    while at < len(data):
        (length,) = struct.unpack(">I", data[at : at + 4])
        kind = data[at + 4 : at + 8]
        body = data[at + 8 : at + 8 + length]
        (crc,) = struct.unpack(">I", data[at + 8 + length : at + 12 + length])
        if zlib.crc32(kind + body) != crc:
            raise ValueError(f"PNG chunk {kind!r}: the CRC does not match")
        chunks.append((kind, body))
        at += 12 + length
        if kind == b"IEND":
            break
    return chunks


def _paeth(a: int, b: int, c: int) -> int:
    """The Paeth predictor (section 9.4)."""
    p = a + b - c
    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
    if pa <= pb and pa <= pc:
        return a
    return b if pb <= pc else c


def _unfilter(raw: bytes, width: int, height: int, bpp: int) -> bytes:
    """Undo the per-row filters: None, Sub, Up, Average, Paeth (section 9.2)."""
    stride = width * bpp
    out = bytearray(stride * height)
    previous = bytearray(stride)
    for y in range(height):
        kind = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1 : (y + 1) * (stride + 1)])
        if kind == 1:
            for i in range(bpp, stride):
                line[i] = (line[i] + line[i - bpp]) & 0xFF
        elif kind == 2:
            line = bytearray((x + p) & 0xFF for x, p in zip(line, previous, strict=True))
        elif kind == 3:
            for i in range(stride):
                left = line[i - bpp] if i >= bpp else 0
                line[i] = (line[i] + ((left + previous[i]) >> 1)) & 0xFF
        elif kind == 4:
            for i in range(stride):
                left, corner = (line[i - bpp], previous[i - bpp]) if i >= bpp else (0, 0)
                line[i] = (line[i] + _paeth(left, previous[i], corner)) & 0xFF
        elif kind != 0:
            raise ValueError(f"PNG row {y}: unknown filter type {kind}")
        out[y * stride : (y + 1) * stride] = line
        previous = line
    return bytes(out)


def read_png(data: bytes) -> Image:
    """Decode an 8-bit, non-interlaced truecolour PNG (with or without alpha)."""
    chunks = _chunks(data)
    if not chunks or chunks[0][0] != b"IHDR":
        raise ValueError("PNG file: the first chunk is not IHDR")
    width, height, depth, colour, _compression, _filter, interlace = struct.unpack(">IIBBBBB", chunks[0][1])
    if depth != 8 or colour not in CHANNELS or interlace != 0:
        raise ValueError(
            f"PNG file: bit depth {depth}, colour type {colour}, interlace {interlace} is not handled here"
        )
    raw = zlib.decompress(b"".join(body for kind, body in chunks if kind == b"IDAT"))
    channels = CHANNELS[colour]
    if len(raw) != height * (width * channels + 1):
        raise ValueError(f"PNG file: {len(raw)} bytes of image data for {width} x {height} pixels")
    return Image(width, height, channels, _unfilter(raw, width, height, channels))
