"""Writing the sidecar's answers into a Calc document: result sheets with
formats, bold headers, widths and frozen rows, charts described as data,
comments on the cells with data problems and the list of problems.

Called only from the thread that runs a command (never from the reader
thread of trialyst_client).
"""

import json
import time

import uno
from com.sun.star.awt import Rectangle
from com.sun.star.beans import PropertyValue
from com.sun.star.lang import Locale
from com.sun.star.table import CellAddress, CellRangeAddress

from trialyst_client import column_letters, parse_a1

#: Document property that lists the sheets the add-in wrote, one per line.
OWN_SHEETS_PROPERTY = "trialyst sheets"
#: Document property that holds the last choices for the analysis (JSON).
CHOICES_PROPERTY = "trialyst choices"
#: Start of every comment the add-in puts on a cell.
COMMENT_MARK = "trialyst: "
#: The sheet that lists the data problems.
PROBLEMS_SHEET = "Data problems"
#: Width of one character, in 1/100 mm (Liberation Sans 10 pt).
CHARACTER_WIDTH = 205
BOLD = 150.0
#: Milliseconds spent in each part of writing, for the command's result.
PHASES = {}


def timed(phase, started):
    PHASES[phase] = round(PHASES.get(phase, 0.0) + (time.perf_counter() - started) * 1000.0, 1)


#: Charts that could not be drawn in the last run, for the log.
CHART_PROBLEMS = []
#: A result sheet's name may not exceed this (the xlsx limit).
MAX_SHEET_NAME = 31


def user_property(document, name, default=""):
    properties = document.getDocumentProperties().getUserDefinedProperties()
    try:
        return properties.getPropertyValue(name)
    except Exception:
        return default


def set_user_property(document, name, value):
    properties = document.getDocumentProperties().getUserDefinedProperties()
    try:
        properties.setPropertyValue(name, value)
    except Exception:
        properties.addProperty(name, 0, value)


def own_sheets(document):
    text = user_property(document, OWN_SHEETS_PROPERTY, "")
    return [name for name in text.split("\n") if name]


def remove_own_sheets(document, prefix=""):
    """Removes the sheets a former run of the same kind wrote. `prefix`
    selects the kind ('analyse', 'inspect', 'plan', 'size')."""
    started = time.perf_counter()
    sheets = document.getSheets()
    kept = []
    for entry in own_sheets(document):
        kind, _, name = entry.partition("\t")
        if kind == prefix and sheets.hasByName(name):
            charts = sheets.getByName(name).getCharts()
            for chart_name in charts.getElementNames():
                charts.removeByName(chart_name)
            sheets.removeByName(name)
        elif kind != prefix:
            kept.append(entry)
    set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(kept))
    timed("remove", started)


#: Sheets of a former run, cleared and kept for the next run to fill
#: (inserting and removing sheets is the slow part of writing).
REUSABLE = {}


def clear_own_sheets(document, kinds):
    """Empties the sheets a former run of these kinds wrote (values,
    formats, charts) and keeps them for reuse; returns how many."""
    started = time.perf_counter()
    sheets = document.getSheets()
    kept = []
    REUSABLE.clear()
    for entry in own_sheets(document):
        kind, _, name = entry.partition("\t")
        if kind in kinds and sheets.hasByName(name):
            sheet = sheets.getByName(name)
            charts = sheet.getCharts()
            for chart_name in charts.getElementNames():
                charts.removeByName(chart_name)
            sheet.clearContents(1023)  # every com.sun.star.sheet.CellFlags
            REUSABLE[name] = sheet
        elif kind not in kinds:
            kept.append(entry)
    set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(kept))
    timed("clear", started)
    return len(REUSABLE)


def remove_unused_sheets(document):
    """Removes the cleared sheets of a former run that this run did not fill."""
    started = time.perf_counter()
    sheets = document.getSheets()
    for name in list(REUSABLE):
        if sheets.hasByName(name):
            sheets.removeByName(name)
    REUSABLE.clear()
    timed("remove", started)


def free_sheet_name(sheets, wanted):
    name = wanted[:MAX_SHEET_NAME]
    number = 2
    while sheets.hasByName(name):
        suffix = " (%d)" % number
        name = wanted[: MAX_SHEET_NAME - len(suffix)] + suffix
        number += 1
    return name


def number_format_key(document, code, cache):
    if code in cache:
        return cache[code]
    formats = document.getNumberFormats()
    locale = Locale("en", "US", "")
    key = formats.queryKey(code, locale, False)
    if key == -1:
        key = formats.addNew(code, locale)
    cache[code] = key
    return key


def add_sheet(document, name, kind, position=None):
    """A new sheet recorded as the add-in's own (a cleared one of the former
    run when it had this name); returns (sheet, name)."""
    sheets = document.getSheets()
    if name[:MAX_SHEET_NAME] in REUSABLE:
        name = name[:MAX_SHEET_NAME]
        del REUSABLE[name]
    else:
        name = free_sheet_name(sheets, name)
        sheets.insertNewByName(name, sheets.getCount() if position is None else position)
    entries = own_sheets(document)
    entries.append("%s\t%s" % (kind, name))
    set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(entries))
    return sheets.getByName(name), name


def write_table(document, controller, table, kind, format_cache):
    """One table of the protocol's answer into a new sheet; returns its name."""
    sheet, name = add_sheet(document, table["name"], kind)
    values = table.get("values") or []
    if not values:
        return name
    n_rows = len(values)
    n_cols = max(len(row) for row in values)
    rows = tuple(
        tuple("" if value is None else value for value in list(row) + [None] * (n_cols - len(row)))
        for row in values
    )
    target = sheet.getCellRangeByPosition(0, 0, n_cols - 1, n_rows - 1)
    target.setDataArray(rows)
    # Number formats: one property set per run of equal codes in a column.
    formats = table.get("numberFormats") or []
    for col in range(n_cols):
        run_start = 0
        run_code = None
        for row in range(n_rows + 1):
            code = formats[row][col] if row < len(formats) and col < len(formats[row]) else None
            if code != run_code:
                if run_code not in (None, "General"):
                    key = number_format_key(document, run_code, format_cache)
                    sheet.getCellRangeByPosition(col, run_start, col, row - 1).NumberFormat = key
                run_start, run_code = row, code
    for row in table.get("headerRows") or []:
        if row < n_rows:
            sheet.getCellRangeByPosition(0, row, n_cols - 1, row).CharWeight = BOLD
    columns = sheet.getColumns()
    for col, width in table.get("columnWidths") or []:
        if col < columns.getCount():
            columns.getByIndex(int(col)).Width = int(width * CHARACTER_WIDTH)
    frozen = int(table.get("frozenRows") or 0)
    started = time.perf_counter()
    if frozen and controller is not None:
        controller.setActiveSheet(sheet)
        controller.freezeAtPosition(0, frozen)
    timed("freeze", started)
    return name


def draw_charts(document, tables, names):
    """The charts of each table, drawn once every table is written (a
    chart's data may sit on a sheet written after its own)."""
    started = time.perf_counter()
    renamed = {table["name"]: name for table, name in zip(tables, names)}
    for table, name in zip(tables, names):
        sheet = document.getSheets().getByName(name)
        for number, chart in enumerate(table.get("charts") or [], 1):
            try:
                add_chart(document, sheet, name, chart, number, renamed)
            except Exception as error:
                # A chart the office cannot draw leaves the tables in place.
                CHART_PROBLEMS.append("%s chart %d: %s" % (name, number, getattr(error, "Message", error)))
    timed("charts", started)


def range_address(document, description, default_sheet_index, renamed):
    sheets = document.getSheets()
    wanted = renamed.get(description.get("sheet"), description.get("sheet"))
    text = description["range"]
    first, _, last = text.partition(":")
    first_row, first_col = parse_a1(first)
    last_row, last_col = parse_a1(last or first)
    index = default_sheet_index
    for position in range(sheets.getCount()):
        if sheets.getByIndex(position).getName() == wanted:
            index = position
    return CellRangeAddress(index, first_col, first_row, last_col, last_row)


def add_chart(document, sheet, sheet_name, chart, number, renamed):
    """A chart described as data, drawn with Calc's own chart objects: one
    series per described series, categories from the first."""
    series = chart.get("series") or []
    if not series:
        return
    index = sheet.getRangeAddress().Sheet
    row, col = parse_a1(chart["anchor"])
    anchor_cell = sheet.getCellByPosition(col, row)
    position = anchor_cell.Position
    width_px, height_px = chart.get("size") or [480, 288]
    rectangle = Rectangle(position.X, position.Y, int(width_px * 26.5), int(height_px * 26.5))
    ranges = [range_address(document, series[0]["categories"], index, renamed)]
    ranges += [range_address(document, item["values"], index, renamed) for item in series]
    charts = sheet.getCharts()
    chart_name = "trialyst chart %d" % number
    if charts.hasByName(chart_name):
        charts.removeByName(chart_name)
    charts.addNewByName(chart_name, rectangle, tuple(ranges), False, True)
    embedded = charts.getByName(chart_name).getEmbeddedObject()
    kind = chart.get("kind")
    diagram_service = {
        "scatter": "com.sun.star.chart.XYDiagram",
        "columns": "com.sun.star.chart.BarDiagram",
    }.get(kind, "com.sun.star.chart.LineDiagram")
    embedded.setDiagram(embedded.createInstance(diagram_service))
    if kind in ("points", "lines", "scatter"):
        # Markers at every point (com.sun.star.chart.ChartSymbolType.AUTO).
        embedded.getDiagram().SymbolType = -2
    if kind in ("points", "scatter"):
        embedded.getDiagram().Lines = False
    embedded.HasMainTitle = True
    embedded.getTitle().String = chart.get("title", "")
    diagram = embedded.getDiagram()
    try:
        diagram.HasXAxisTitle = True
        diagram.getXAxisTitle().String = chart.get("xTitle", "")
        diagram.HasYAxisTitle = True
        diagram.getYAxisTitle().String = chart.get("yTitle", "")
    except Exception:
        pass


def clear_marks(sheet):
    """Removes the comments the add-in put on a sheet."""
    annotations = sheet.getAnnotations()
    for index in range(annotations.getCount() - 1, -1, -1):
        annotation = annotations.getByIndex(index)
        if annotation.getString().startswith(COMMENT_MARK):
            annotations.removeByIndex(index)


def clear_all_marks(document):
    sheets = document.getSheets()
    for index in range(sheets.getCount()):
        clear_marks(sheets.getByIndex(index))


def mark_findings(document, findings):
    """A comment on each cell with a data problem, and the list sheet;
    returns the number of comments placed."""
    sheets = document.getSheets()
    placed = 0
    for finding in findings:
        cell = finding.get("cell") or ""
        sheet_name = finding.get("sheet")
        if not cell or not sheet_name or not sheets.hasByName(sheet_name):
            continue
        sheet = sheets.getByName(sheet_name)
        first = cell.split(":")[0]
        try:
            row, col = parse_a1(first)
        except ValueError:
            continue
        address = CellAddress(sheet.getRangeAddress().Sheet, col, row)
        sheet.getAnnotations().insertNew(address, COMMENT_MARK + finding.get("message", ""))
        placed += 1
    return placed


def write_problems_sheet(document, controller, findings, kind, format_cache):
    table = {
        "name": PROBLEMS_SHEET,
        "values": [["Sheet", "Cell", "Found", "What was done", "Problem"]]
        + [
            [
                finding.get("sheet") or "",
                finding.get("cell") or "",
                "" if finding.get("found") is None else str(finding.get("found")),
                finding.get("action") or "",
                finding.get("message") or "",
            ]
            for finding in findings
        ],
        "headerRows": [0],
        "columnWidths": [[0, 16], [1, 8], [2, 14], [3, 30], [4, 80]],
        "frozenRows": 1,
    }
    return write_table(document, controller, table, kind, format_cache)


def property_values(**values):
    out = []
    for name, value in values.items():
        item = PropertyValue()
        item.Name = name
        item.Value = value
        out.append(item)
    return tuple(out)


def choices(document):
    text = user_property(document, CHOICES_PROPERTY, "")
    try:
        return json.loads(text) if text else {}
    except ValueError:
        return {}
