#!/usr/bin/env python3
"""Checks a workbook's printed PDF against what the workbook's print setup promises.

Usage: pdf_print_check.py WORKBOOK.xlsx PRINTED.pdf PAPER

PAPER is A4 or Letter, the paper the PDF was printed on. Prints one line per
problem and exits 1 when there is any, 0 when there is none.

Checks (each a promise of the print plan the writer makes, see
workbook-io/src/write/print.rs):
- the paper: every page is the size of PAPER (either way round);
- the page count: each visible sheet with content prints on exactly its manual
  page breaks + 1 pages, one page across (more pages mean the application broke
  a page or a row of columns where the plan did not);
- the scale: no word of five or more characters is printed smaller than 8 pt.
  The smaller side of a word's box in
  poppler's `pdftotext -bbox` is the font's ascent plus descent, about 1.29 times
  the type size for the Carlito/Calibri and Liberation fonts (measured here:
  11-pt text at 75% gives 10.67 pt boxes), so a box under 8 x 1.29 x 0.98 pt is
  type below 8 pt;
- charts whole: each chart's title and both axis titles (read from the chart
  parts of the xlsx) print on the same page; a chart cut by a page break shows
  its title on one page and its axis title on the next.

Needs poppler-utils (pdftotext, pdfinfo).
"""

import html
import re
import subprocess
import sys
import zipfile

PAPERS = {"A4": (595.3, 841.9), "Letter": (612.0, 792.0)}
SMALLEST_TYPE = 8.0
BOX_PER_POINT = 1.29


def attribute(tag, name):
    match = re.search(r'\s%s="([^"]*)"' % re.escape(name), tag)
    return html.unescape(match.group(1)) if match else None


def part_path(target):
    """A relationship target (relative "../x", absolute "/xl/x" or plain "x") as a
    path inside the package."""
    target = target.replace("../", "").lstrip("/")
    return target if target.startswith("xl/") else "xl/" + target


def sheets_of(book):
    """(name, hidden, sheet xml, [chart xml]) of each sheet, in order."""
    workbook = book.read("xl/workbook.xml").decode()
    rels = book.read("xl/_rels/workbook.xml.rels").decode()
    targets = {
        attribute(tag, "Id"): attribute(tag, "Target")
        for tag in re.findall(r"<Relationship\b[^>]*>", rels)
    }
    names = set(book.namelist())
    found = []
    for tag in re.findall(r"<sheet\b[^>]*>", workbook):
        target = targets.get(attribute(tag, "r:id"), "")
        path = part_path(target)
        xml = book.read(path).decode()
        charts = []
        sheet_rels = path.replace("worksheets/", "worksheets/_rels/") + ".rels"
        if sheet_rels in names:
            for drawing in re.findall(r'Target="([^"]*drawings/drawing[^"]*)"', book.read(sheet_rels).decode()):
                drawing_path = part_path(drawing)
                drawing_rels = drawing_path.replace("drawings/", "drawings/_rels/") + ".rels"
                if drawing_rels not in names:
                    continue
                for chart in re.findall(r'Target="([^"]*charts/chart[^"]*)"', book.read(drawing_rels).decode()):
                    charts.append(book.read(part_path(chart)).decode())
        found.append((attribute(tag, "name"), attribute(tag, "state") == "hidden", xml, charts))
    return found


def chart_titles(chart_xml):
    """The texts of a chart's titles: chart, then axes."""
    titles = []
    for body in re.findall(r"<(?:c:)?title\b[^>]*>(.*?)</(?:c:)?title>", chart_xml, re.S):
        text = "".join(html.unescape(t) for t in re.findall(r"<(?:a:)?t>(.*?)</(?:a:)?t>", body, re.S))
        if text:
            titles.append(text)
    return titles


def pages_of(pdf):
    """[(width, height, [(x0, y0, x1, y1, word)])] of each page."""
    out = subprocess.run(["pdftotext", "-bbox", pdf, "-"], capture_output=True, text=True, check=True).stdout
    pages = []
    for page in re.findall(r"<page\b(.*?)</page>", out, re.S):
        width = float(attribute(page, "width") or 0)
        height = float(attribute(page, "height") or 0)
        words = []
        for tag, word in re.findall(r"<word\b([^>]*)>(.*?)</word>", page, re.S):
            words.append(
                (
                    float(attribute(tag, "xMin")),
                    float(attribute(tag, "yMin")),
                    float(attribute(tag, "xMax")),
                    float(attribute(tag, "yMax")),
                    html.unescape(word),
                )
            )
        pages.append((width, height, words))
    return pages


def type_box(word):
    """The extent of a word's box across its line of text, or None for a word too short
    to tell. A word set across the page has its type box as height; one set up the page
    (a vertical axis title) as width. A word of five or more characters is longer than
    its type box is tall (a character is about half the type size wide, the box about
    1.29 times it), so the smaller side of its box is the type box either way."""
    x0, y0, x1, y1, text = word
    if len(text.strip()) < 5:
        return None
    return min(x1 - x0, y1 - y0)


def has_content(sheet_xml, charts):
    return bool(charts) or re.search(r"<c\b[^>]*>\s*<(v|is)\b", sheet_xml) is not None


def contains_words(page_words, text):
    """Whether the words of `text` appear in order on a page (as a run of words)."""
    wanted = text.split()
    words = [word for (_, _, _, _, word) in page_words]
    if not wanted:
        return False
    for start in range(len(words) - len(wanted) + 1):
        if words[start : start + len(wanted)] == wanted:
            return True
    return False


def check(workbook, pdf, paper):
    problems = []
    book = zipfile.ZipFile(workbook)
    sheets = [s for s in sheets_of(book) if not s[1]]
    pages = pages_of(pdf)
    name = workbook.rsplit("/", 1)[-1]

    # The paper.
    want = PAPERS[paper]
    for number, (width, height, _) in enumerate(pages, 1):
        if sorted((round(width), round(height))) != sorted((round(want[0]), round(want[1]))):
            problems.append(f"{name} ({paper}): page {number} is {width:.0f} x {height:.0f} pt, not {paper}")
            break

    # The page count.
    promised = 0
    for sheet_name, _, xml, charts in sheets:
        if not has_content(xml, charts):
            continue
        breaks = len(re.findall(r"<brk\b", re.search(r"<rowBreaks\b.*?</rowBreaks>", xml, re.S).group(0))) if "<rowBreaks" in xml else 0
        promised += breaks + 1
    # More pages than promised means something spilled (a second page across, a chart or
    # a long cell pushed over). Fewer is told but not a failure: a manual break at the
    # foot of a sheet's content makes no empty page in the office.
    if len(pages) < promised:
        print(f"note: {name} ({paper}): {len(pages)} pages printed, {promised} promised (a break at the foot of a sheet)")
    if len(pages) > promised:
        problems.append(
            f"{name} ({paper}): {len(pages)} pages printed, the print setup promises {promised} "
            "(one page across and a page per manual break for each sheet)"
        )

    # The scale.
    smallest_box = SMALLEST_TYPE * BOX_PER_POINT * 0.98
    for number, (_, _, words) in enumerate(pages, 1):
        boxes = [(w, type_box(w)) for w in words]
        small = [(w, box) for (w, box) in boxes if box is not None and box < smallest_box]
        if small:
            word, box = small[0]
            size = box / BOX_PER_POINT
            problems.append(
                f"{name} ({paper}): page {number} prints '{word[4]}' at about {size:.1f} pt "
                f"({len(small)} words below {SMALLEST_TYPE:.0f} pt)"
            )

    # Charts whole: the title and both axis titles on one page.
    for sheet_name, _, xml, charts in sheets:
        for chart in charts:
            titles = chart_titles(chart)
            if not titles:
                continue
            title, axes = titles[0], titles[1:]
            holding = [n for n, (_, _, words) in enumerate(pages, 1) if contains_words(words, title)]
            if not holding:
                problems.append(f"{name} ({paper}): sheet '{sheet_name}': the chart '{title}' is not printed")
                continue
            if not any(all(contains_words(pages[n - 1][2], axis) for axis in axes) for n in holding):
                problems.append(
                    f"{name} ({paper}): sheet '{sheet_name}': the chart '{title}' (page {holding[0]}) "
                    f"is printed without its axis titles {axes} on the same page: cut by a page break"
                )
    return problems


def main():
    if len(sys.argv) != 4 or sys.argv[3] not in PAPERS:
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    problems = check(sys.argv[1], sys.argv[2], sys.argv[3])
    for problem in problems:
        print(problem)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
