#!/usr/bin/env python3
"""Writes a copy of a workbook with every sheet's paper set to A4 or Letter.

Usage: set_paper.py IN.xlsx OUT.xlsx A4|Letter

The paper is the `paperSize` attribute of each sheet's `pageSetup` element
(ECMA-376 Part 1, 18.3.1.64: 1 is Letter, 9 is A4); a sheet without the element
gets one. Everything else is copied as it is.
"""

import re
import sys
import zipfile

CODES = {"A4": "9", "Letter": "1"}


def set_paper(xml, code):
    if "<pageSetup" in xml:
        def replace(match):
            tag = re.sub(r'\spaperSize="[^"]*"', "", match.group(0))
            return tag.replace("<pageSetup", f'<pageSetup paperSize="{code}"', 1)

        return re.sub(r"<pageSetup\b[^>]*>", replace, xml)
    # pageSetup follows pageMargins in the schema's order.
    if "<pageMargins" in xml:
        return re.sub(r"(<pageMargins\b[^>]*/>)", rf'\1<pageSetup paperSize="{code}"/>', xml, count=1)
    return xml


def main():
    if len(sys.argv) != 4 or sys.argv[3] not in CODES:
        print("usage: set_paper.py IN.xlsx OUT.xlsx A4|Letter", file=sys.stderr)
        return 2
    source, target, paper = sys.argv[1], sys.argv[2], sys.argv[3]
    with zipfile.ZipFile(source) as original, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as copy:
        for item in original.infolist():
            data = original.read(item.filename)
            if re.fullmatch(r"xl/worksheets/sheet\d+\.xml", item.filename):
                data = set_paper(data.decode(), CODES[paper]).encode()
            copy.writestr(item, data)
    return 0


if __name__ == "__main__":
    sys.exit(main())
