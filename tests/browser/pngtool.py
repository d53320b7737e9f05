#!/usr/bin/env python3
"""Small PNG reader/writer for the browser check (standard library only: zlib and struct).

    pngtool.py check FILE MIN_PERCENT   fail unless MIN_PERCENT % of the pixels differ from the
                                        page's two commonest colours (a blank or one-colour page
                                        fails)
    pngtool.py crop FILE OUT X Y W H [SHRINK]
                                        cut a W x H box at (X, Y), then shrink it by an integer
                                        factor (box average) and write it as an RGB PNG

Handles 8-bit RGB and RGBA images without interlacing, which is what Chromium writes.
"""

import struct
import sys
import zlib
from collections import Counter

SIGNATURE = b"\x89PNG\r\n\x1a\n"


def read_png(path):
    """Returns (width, height, rows), each row a bytes object of RGB triplets."""
    with open(path, "rb") as f:
        data = f.read()
    if not data.startswith(SIGNATURE):
        raise ValueError(f"{path}: not a PNG file")
    pos = len(SIGNATURE)
    idat = []
    width = height = None
    colour_type = None
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos : pos + 4])
        kind = data[pos + 4 : pos + 8]
        body = data[pos + 8 : pos + 8 + length]
        pos += 12 + length
        if kind == b"IHDR":
            width, height, depth, colour_type, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or colour_type not in (2, 6) or interlace != 0:
                raise ValueError(
                    f"{path}: only 8-bit RGB/RGBA without interlacing is handled "
                    f"(depth {depth}, colour type {colour_type}, interlace {interlace})"
                )
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
    if width is None:
        raise ValueError(f"{path}: no IHDR chunk")
    raw = zlib.decompress(b"".join(idat))
    channels = 3 if colour_type == 2 else 4
    stride = width * channels
    rows = []
    previous = bytearray(stride)
    at = 0
    for _ in range(height):
        filt = raw[at]
        line = bytearray(raw[at + 1 : at + 1 + stride])
        at += 1 + stride
        unfilter(filt, line, previous, channels)
        rows.append(bytes(line))
        previous = line
    if channels == 4:
        rows = [bytes(b for k, b in enumerate(r) if k % 4 != 3) for r in rows]
    return width, height, rows


def unfilter(filt, line, previous, bpp):
    """Undoes one row's PNG filter in place."""
    if filt == 0:
        return
    for i in range(len(line)):
        left = line[i - bpp] if i >= bpp else 0
        up = previous[i]
        if filt == 1:
            line[i] = (line[i] + left) & 0xFF
        elif filt == 2:
            line[i] = (line[i] + up) & 0xFF
        elif filt == 3:
            line[i] = (line[i] + ((left + up) >> 1)) & 0xFF
        elif filt == 4:
            up_left = previous[i - bpp] if i >= bpp else 0
            p = left + up - up_left
            pa, pb, pc = abs(p - left), abs(p - up), abs(p - up_left)
            pred = left if pa <= pb and pa <= pc else (up if pb <= pc else up_left)
            line[i] = (line[i] + pred) & 0xFF
        else:
            raise ValueError(f"unknown PNG filter {filt}")


def write_png(path, width, height, rows):
    """Writes RGB rows as an 8-bit PNG."""

    def chunk(kind, body):
        return (
            struct.pack(">I", len(body))
            + kind
            + body
            + struct.pack(">I", zlib.crc32(kind + body) & 0xFFFFFFFF)
        )

    raw = b"".join(b"\x00" + r for r in rows)
    with open(path, "wb") as f:
        f.write(SIGNATURE)
        f.write(chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)))
        f.write(chunk(b"IDAT", zlib.compress(raw, 9)))
        f.write(chunk(b"IEND", b""))


def pixels(rows):
    for r in rows:
        for k in range(0, len(r), 3):
            yield r[k : k + 3]


def check(path, min_percent):
    width, height, rows = read_png(path)
    counts = Counter(pixels(rows))
    total = width * height
    common = counts.most_common(2)
    rest = total - sum(n for _, n in common)
    share = 100.0 * rest / total
    names = ", ".join("#%02x%02x%02x %.1f %%" % (c[0], c[1], c[2], 100.0 * n / total) for c, n in common)
    print(f"{path}: {width}x{height}, {len(counts)} colours; commonest {names}; "
          f"{share:.2f} % of pixels are something else")
    if share < min_percent:
        print(f"error: the page looks blank: under {min_percent} % of pixels differ from its "
              f"two commonest colours", file=sys.stderr)
        return 1
    return 0


def crop(path, out, x, y, w, h, shrink=1):
    width, height, rows = read_png(path)
    w, h = min(w, width - x), min(h, height - y)
    box = [r[3 * x : 3 * (x + w)] for r in rows[y : y + h]]
    if shrink > 1:
        nw, nh = w // shrink, h // shrink
        small = []
        for j in range(nh):
            line = bytearray()
            for i in range(nw):
                acc = [0, 0, 0]
                for dy in range(shrink):
                    src = box[j * shrink + dy]
                    for dx in range(shrink):
                        k = 3 * (i * shrink + dx)
                        acc[0] += src[k]
                        acc[1] += src[k + 1]
                        acc[2] += src[k + 2]
                n = shrink * shrink
                line += bytes((acc[0] // n, acc[1] // n, acc[2] // n))
            small.append(bytes(line))
        box, w, h = small, nw, nh
    write_png(out, w, h, box)
    print(f"wrote {out}: {w}x{h}")
    return 0


def main(argv):
    if len(argv) >= 3 and argv[0] == "check":
        return check(argv[1], float(argv[2]))
    if len(argv) in (7, 8) and argv[0] == "crop":
        nums = [int(a) for a in argv[3:]]
        return crop(argv[1], argv[2], *nums)
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
