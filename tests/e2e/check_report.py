#!/usr/bin/python3
"""Checks an HTML page written by `ellipsa report`.

  check_report.py page PAGE.html --lines 58,141 [--min-svg 4] [--json SUMMARY.json]
      self-contained (no address, no script, no external style or font), parses
      as HTML with balanced elements, every <svg> parses as XML and has content
      (marks with hover titles naming a line), the caution is there, and each
      given line is listed among the flagged rows. With --json, the summary's
      flagged lines are exactly the page's.
  check_report.py png SHOT.png
      a real screenshot of the page: a valid PNG, large, many colours, and the
      flagged-row colour present, so the inline SVG was actually drawn.

Exits 0 when everything holds; else prints what failed and exits 1.
"""
import argparse
import html.parser
import json
import re
import struct
import sys
import xml.etree.ElementTree as ET
import zlib

FAILURES = []


def expect(condition, message):
    if not condition:
        FAILURES.append(message)


VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}


class Balance(html.parser.HTMLParser):
    """Element nesting must balance: every non-void start tag has its end tag."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack = []
        self.errors = []
        self.data_lines = []

    def handle_starttag(self, tag, attrs):
        if tag == "tr":
            for name, value in attrs:
                if name == "data-line":
                    self.data_lines.append(int(value))
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        pass  # <x/>: balanced by itself (SVG shapes)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"end tag </{tag}> does not close <{self.stack[-1] if self.stack else 'nothing'}>")
            if tag in self.stack:
                while self.stack and self.stack.pop() != tag:
                    pass
            return
        self.stack.pop()


def check_page(args):
    text = open(args.page, encoding="utf-8").read()
    lower = text.lower()
    for needle in ("http://", "https://", "<script", "<link", "@import", "url(", "<iframe", "<img"):
        expect(needle not in lower, f"the page is not self-contained: it contains '{needle}'")
    expect(lower.startswith("<!doctype html>"), "no <!DOCTYPE html> at the start")
    expect('<meta charset="utf-8">' in lower, "no UTF-8 charset declaration")

    parser = Balance()
    parser.feed(text)
    parser.close()
    expect(not parser.errors, "unbalanced HTML: " + "; ".join(parser.errors[:5]))
    expect(not parser.stack, f"elements left open at the end: {parser.stack[:5]}")

    blocks = re.findall(r"<svg\b.*?</svg>", text, flags=re.S)
    expect(len(blocks) >= args.min_svg, f"{len(blocks)} <svg> elements, expected at least {args.min_svg}")
    for i, block in enumerate(blocks):
        try:
            root = ET.fromstring(block)
        except ET.ParseError as e:
            FAILURES.append(f"<svg> number {i + 1} is not well-formed XML: {e}")
            continue
        marks = [e for e in root.iter() if e.tag in ("circle", "path", "rect", "line")]
        expect(len(marks) > 10, f"<svg> number {i + 1} has only {len(marks)} marks")
        texts = [e for e in root.iter() if e.tag == "text" and (e.text or "").strip()]
        expect(len(texts) >= 3, f"<svg> number {i + 1} has no axis or legend text")
        titles = [e.text or "" for e in root.iter() if e.tag == "title"]
        expect(len(titles) > 0, f"<svg> number {i + 1} has no hover titles")

    # The point plots name rows in their hover titles.
    for line in args.lines:
        expect(line in parser.data_lines, f"line {line} is not among the flagged rows of the page")
        expect(re.search(rf"<title>line {line}\b", text) is not None, f"no mark has a hover title for line {line}")

    expect("evidence to investigate, not a verdict on a part, a batch or a person" in text, "the caution is missing")
    expect("qualified review" in text, "the caution's second sentence is missing")

    if args.json:
        summary = json.load(open(args.json, encoding="utf-8"))
        expect(sorted(summary["flagged_lines"]) == sorted(parser.data_lines),
               "the JSON summary's flagged lines differ from the page's table")
        expect(summary["flagged"] == len(parser.data_lines), "the JSON flagged count differs from the table")


def png_pixels(path):
    """Decodes an 8-bit RGB or RGBA, non-interlaced PNG: (width, height, channels, rows of bytes)."""
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    pos, idat, header = 8, [], None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        pos += 12 + length
    width, height, depth, colour, _, _, interlace = header
    if depth != 8 or colour not in (2, 6) or interlace != 0:
        raise ValueError(f"unsupported PNG (depth {depth}, colour type {colour}, interlace {interlace})")
    channels = 3 if colour == 2 else 4
    raw = zlib.decompress(b"".join(idat))
    stride = width * channels
    rows, previous = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        kind, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        if kind == 1:
            for i in range(channels, stride):
                line[i] = (line[i] + line[i - channels]) & 0xFF
        elif kind == 2:
            line = bytearray((a + b) & 0xFF for a, b in zip(line, previous))
        elif kind == 3:
            for i in range(stride):
                left = line[i - channels] if i >= channels else 0
                line[i] = (line[i] + ((left + previous[i]) >> 1)) & 0xFF
        elif kind == 4:
            for i in range(stride):
                a = line[i - channels] if i >= channels else 0
                b, c = previous[i], previous[i - channels] if i >= channels else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 0xFF
        rows.append(bytes(line))
        previous = line
    return width, height, channels, rows


def check_png(args):
    import os
    size = os.path.getsize(args.png)
    expect(size > 60_000, f"the screenshot is only {size} bytes: the page looks blank")
    try:
        width, height, channels, rows = png_pixels(args.png)
    except (ValueError, zlib.error, struct.error, TypeError) as e:
        FAILURES.append(f"the screenshot is not a readable PNG: {e}")
        return
    colours, flag_pixels, ink_pixels = set(), 0, 0
    for y in range(0, height, 2):  # every other row is plenty
        row = rows[y]
        for x in range(0, width * channels, channels * 2):
            r, g, b = row[x], row[x + 1], row[x + 2]
            colours.add((r, g, b))
            # The flagged-row colour (#c8553d), allowing for anti-aliasing.
            if abs(r - 0xC8) < 12 and abs(g - 0x55) < 14 and abs(b - 0x3D) < 14:
                flag_pixels += 1
            if r + g + b < 200:
                ink_pixels += 1
    expect(len(colours) > 200, f"the screenshot has only {len(colours)} colours: nothing was drawn")
    expect(flag_pixels > 50, f"only {flag_pixels} pixels in the flagged-row colour: the plots were not drawn")
    expect(ink_pixels > 2000, f"only {ink_pixels} dark pixels: no text was rendered")
    print(f"screenshot {width}x{height}: {len(colours)} colours, {flag_pixels} flag-coloured and "
          f"{ink_pixels} dark pixels sampled")


def main():
    parser = argparse.ArgumentParser()
    sub = parser.add_subparsers(dest="what", required=True)
    page = sub.add_parser("page")
    page.add_argument("page")
    page.add_argument("--lines", default="", type=lambda s: [int(v) for v in s.split(",") if v])
    page.add_argument("--min-svg", type=int, default=4)
    page.add_argument("--json")
    png = sub.add_parser("png")
    png.add_argument("png")
    args = parser.parse_args()
    if args.what == "page":
        check_page(args)
    else:
        check_png(args)
    for f in FAILURES:
        print("FAIL:", f)
    if not FAILURES:
        print("ok:", args.what)
    sys.exit(1 if FAILURES else 0)


if __name__ == "__main__":
    main()
