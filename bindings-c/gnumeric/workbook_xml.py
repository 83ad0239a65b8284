"""Writes small Gnumeric workbooks (.gnumeric XML) with numbers, texts,
formulas, array formulas and a conditional highlight, for the demo workbook
and the host tests. Standard library only.

Numbers are written with repr(), which reads back as the same double.
Cells are addressed 0-based (row, col); `a1(row, col)` gives "B3"-style text.
"""
import gzip
from xml.sax.saxutils import escape, quoteattr


def col_name(c):
    s = ""
    c += 1
    while c:
        c, r = divmod(c - 1, 26)
        s = chr(65 + r) + s
    return s


def a1(row, col, absolute=False):
    d = "$" if absolute else ""
    return "%s%s%s%d" % (d, col_name(col), d, row + 1)


def area(r0, c0, r1, c1, absolute=True):
    """An A1 range from (r0, c0) to (r1, c1) inclusive."""
    return "%s:%s" % (a1(r0, c0, absolute), a1(r1, c1, absolute))


class Sheet(object):
    def __init__(self, name):
        self.name = name
        self.cells = {}  # (row, col) -> xml attributes and text
        self.content = {}  # (row, col) -> ("number"|"text"|"formula", value) or ("array", formula, rows, cols)
        self.highlights = []  # (r0, c0, r1, c1, formula, back colour)
        self.widths = {}

    def put(self, row, col, value):
        """A number, a text, a formula ("=..."), or None (left blank)."""
        if value is None:
            self.cells.pop((row, col), None)
            self.content.pop((row, col), None)
        elif isinstance(value, str) and value.startswith("="):
            self.cells[(row, col)] = ("", value)
            self.content[(row, col)] = ("formula", value)
        elif isinstance(value, str):
            self.cells[(row, col)] = (' ValueType="60"', value)
            self.content[(row, col)] = ("text", value)
        else:
            self.cells[(row, col)] = (' ValueType="40"', repr(float(value)))
            self.content[(row, col)] = ("number", float(value))

    def put_row(self, row, col, values):
        for j, v in enumerate(values):
            self.put(row, col + j, v)

    def array(self, row, col, rows, cols, formula):
        """An array formula filling rows x cols cells from (row, col)."""
        self.cells[(row, col)] = (' Rows="%d" Cols="%d"' % (rows, cols), formula)
        self.content[(row, col)] = ("array", formula, rows, cols)

    def highlight(self, r0, c0, r1, c1, formula, back="FFFF:C8C8:C8C8"):
        """Fills (r0, c0)-(r1, c1) with `back` where `formula` is true. Gnumeric
        reads the formula's relative references as seen from cell A1, whatever
        the region: "=$L1=1" tests column L of each cell's own row."""
        self.highlights.append((r0, c0, r1, c1, formula, back))

    def width(self, col, points):
        self.widths[col] = points

    def xml(self):
        max_row = max([r for r, _ in self.cells] + [0]) + 1
        max_col = max([c for _, c in self.cells] + [0]) + 1
        out = ['  <gnm:Sheet>', '   <gnm:Name>%s</gnm:Name>' % escape(self.name),
               '   <gnm:MaxCol>%d</gnm:MaxCol><gnm:MaxRow>%d</gnm:MaxRow>' % (max_col, max_row)]
        if self.widths:
            out.append('   <gnm:Cols DefaultSizePts="64">')
            for c, w in sorted(self.widths.items()):
                out.append('    <gnm:ColInfo No="%d" Unit="%g"/>' % (c, w))
            out.append('   </gnm:Cols>')
        if self.highlights:
            out.append('   <gnm:Styles>')
            for r0, c0, r1, c1, formula, back in self.highlights:
                out.append('    <gnm:StyleRegion startCol="%d" startRow="%d" endCol="%d" endRow="%d">'
                           % (c0, r0, c1, r1))
                out.append('     <gnm:Style Format="General">')
                out.append('      <gnm:Condition Operator="8"><gnm:Expression0>%s</gnm:Expression0>'
                           '<gnm:Style Shade="1" Back=%s PatternColor=%s/></gnm:Condition>'
                           % (escape(formula.lstrip("=")), quoteattr(back), quoteattr(back)))
                out.append('     </gnm:Style>')
                out.append('    </gnm:StyleRegion>')
            out.append('   </gnm:Styles>')
        out.append('   <gnm:Cells>')
        for (r, c), (attrs, text) in sorted(self.cells.items()):
            out.append('    <gnm:Cell Row="%d" Col="%d"%s>%s</gnm:Cell>' % (r, c, attrs, escape(text)))
        out.append('   </gnm:Cells>')
        out.append('  </gnm:Sheet>')
        return "\n".join(out)


def write(path, sheets, compress=False):
    text = "\n".join([
        '<?xml version="1.0" encoding="UTF-8"?>',
        '<gnm:Workbook xmlns:gnm="http://www.gnumeric.org/v10.dtd">',
        ' <gnm:SheetNameIndex>',
        "\n".join('  <gnm:SheetName>%s</gnm:SheetName>' % escape(s.name) for s in sheets),
        ' </gnm:SheetNameIndex>',
        ' <gnm:Sheets>',
        "\n".join(s.xml() for s in sheets),
        ' </gnm:Sheets>',
        '</gnm:Workbook>', ''])
    data = text.encode("utf-8")
    with open(path, "wb") as f:
        f.write(gzip.compress(data, mtime=0) if compress else data)
