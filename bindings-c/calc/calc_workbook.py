"""Writes a workbook described with workbook_xml.Sheet objects (numbers,
texts, formulas, array formulas, conditional shading, column widths) into
LibreOffice Calc through UNO, and saves it in Calc's native format (.ods).
Formulas are written the Gnumeric way in the description and translated:
argument separator ',' -> ';', sheet references Name!A1:B2 -> $Name.A1:B2,
TRUE -> TRUE(). Run with Debian's /usr/bin/python3 (the UNO bridge)."""
import re

from com.sun.star.sheet.ConditionOperator import FORMULA


def calc_formula(formula):
    out = []
    for part in re.split(r'("[^"]*")', formula):
        if part.startswith('"'):
            out.append(part)
            continue
        part = part.replace(",", ";")
        part = re.sub(r"\b([A-Za-z_][A-Za-z0-9_]*)!", r"$\1.", part)
        part = re.sub(r"\bTRUE\b(?!\()", "TRUE()", part)
        out.append(part)
    return "".join(out)


def write(session, path, sheets):
    doc = session.new_sheet_document()
    styles = doc.StyleFamilies.getByName("CellStyles")
    while doc.Sheets.Count < len(sheets):
        doc.Sheets.insertNewByName("tmp%d" % doc.Sheets.Count, doc.Sheets.Count)
    shaded = {}
    for k, s in enumerate(sheets):
        sheet = doc.Sheets.getByIndex(k)
        sheet.Name = s.name
    for k, s in enumerate(sheets):
        sheet = doc.Sheets.getByIndex(k)
        for (r, c), item in sorted(s.content.items()):
            cell = sheet.getCellByPosition(c, r)
            if item[0] == "number":
                cell.setValue(item[1])
            elif item[0] == "text":
                cell.setString(item[1])
            elif item[0] == "formula":
                cell.setFormula(calc_formula(item[1]))
            else:
                _, formula, rows, cols = item
                sheet.getCellRangeByPosition(c, r, c + cols - 1, r + rows - 1).setArrayFormula(calc_formula(formula))
        for col, points in s.widths.items():
            sheet.Columns.getByIndex(col).Width = int(points * 35.28)  # points -> 1/100 mm
        for r0, c0, r1, c1, formula, back in s.highlights:
            if back not in shaded:
                name = "ellipsa_shade_%d" % len(shaded)
                style = doc.createInstance("com.sun.star.style.CellStyle")
                styles.insertByName(name, style)
                red, green, blue = (int(x, 16) >> 8 for x in back.split(":"))
                style.CellBackColor = (red << 16) | (green << 8) | blue
                shaded[back] = name
            area = sheet.getCellRangeByPosition(c0, r0, c1, r1)
            entries = area.ConditionalFormat
            entries.addNew(_props(Operator=FORMULA, Formula1=_relative(formula, r0), StyleName=shaded[back]))
            area.ConditionalFormat = entries
    doc.calculateAll()
    session.save_ods(doc, path)
    return doc


def _relative(formula, r0):
    """The description's condition is relative to A1 (Gnumeric's reading);
    Calc reads it relative to the top-left cell of the area: shift the rows."""
    body = calc_formula(formula.lstrip("="))
    return re.sub(r"(\$?[A-Z]+)(\d+)", lambda m: "%s%d" % (m.group(1), int(m.group(2)) + r0), body)


def _props(**kw):
    from com.sun.star.beans import PropertyValue
    out = []
    for k, v in kw.items():
        p = PropertyValue()
        p.Name, p.Value = k, v
        out.append(p)
    return tuple(out)
