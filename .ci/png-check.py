#!/usr/bin/env python3
"""Fail unless a PNG screenshot shows a rendered page: it decodes, has the
size asked for, and is neither blank nor single-coloured (many distinct
colours, no colour covering nearly all of it, ink on a good part of it).
Standard library only (zlib); PNG per the W3C PNG specification, 3rd ed."""
import struct
import sys
import zlib


def decode(path):
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    pos, idat, head = 8, b"", None
    while pos < len(data):
        (n,) = struct.unpack(">I", data[pos:pos + 4])
        kind, body = data[pos + 4:pos + 8], data[pos + 8:pos + 8 + n]
        pos += 12 + n
        if kind == b"IHDR":
            head = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        elif kind == b"IEND":
            break
    width, height, depth, colour, _, _, interlace = head
    channels = {0: 1, 2: 3, 4: 2, 6: 4}.get(colour)
    if depth != 8 or channels is None or interlace != 0:
        raise ValueError(f"unexpected PNG layout depth={depth} colour={colour}")
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, prev = [], bytearray(stride)
    for y in range(height):
        f = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = prev[i]
            c = prev[i - channels] if i >= channels else 0
            if f == 1:
                line[i] = (line[i] + a) & 255
            elif f == 2:
                line[i] = (line[i] + b) & 255
            elif f == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 255
        rows.append(bytes(line))
        prev = line
    return width, height, channels, rows


def main():
    path, want_w, want_h = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    w, h, ch, rows = decode(path)
    if (w, h) != (want_w, want_h):
        sys.exit(f"screenshot is {w}x{h}, asked for {want_w}x{want_h}")
    counts = {}
    for line in rows[::2]:
        for x in range(0, w * ch, ch * 2):
            px = line[x:x + min(ch, 3)]
            counts[px] = counts.get(px, 0) + 1
    total = sum(counts.values())
    top = max(counts.values())
    inked = total - top
    print(f"{w}x{h}: {len(counts)} colours, the commonest covers "
          f"{100 * top / total:.1f} %")
    # a blank or failed page is one colour (white, grey or black); a report
    # has text, tables and plots: many colours and ink on several % of it
    if len(counts) < 32:
        sys.exit("too few colours: the page did not render")
    if inked < 0.03 * total:
        sys.exit("almost one colour: the page did not render")


if __name__ == "__main__":
    main()
