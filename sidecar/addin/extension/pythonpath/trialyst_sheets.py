"""Writing the sidecar's answers into a Calc document: result sheets with
formats, bold headers, widths and frozen rows, charts described as data,
comments on the cells with data problems and the list of problems.

Called only from the thread that runs a command (never from the reader
thread of trialyst_client).
"""

import contextlib
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
#: Columns of a Calc sheet (the 16,384 of current versions).
MAX_COLUMNS = 16384
#: A result sheet's name may not exceed this (the xlsx limit).
MAX_SHEET_NAME = 31


@contextlib.contextmanager
def quiet_document(document):
    """While writing: no repainting (controllers locked), no layout or
    notifications (action lock), no recalculation (automatic calculation
    off); each restored afterwards, and the sheets written recorded."""
    calculating = document.isAutomaticCalculationEnabled()
    document.lockControllers()
    document.addActionLock()
    document.enableAutomaticCalculation(False)
    del NEW_OWN_SHEETS[:]
    try:
        yield
    finally:
        started = time.perf_counter()
        flush_own_sheets(document)
        document.enableAutomaticCalculation(calculating)
        timed("unlock: calculation", started)
        document.removeActionLock()
        timed("unlock: actions", started)
        document.unlockControllers()
        timed("unlock: controllers", started)


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
        kind, name, _ = own_entry(entry)
        if kind == prefix and sheets.hasByName(name):
            charts = sheets.getByName(name).getCharts()
            for chart_name in charts.getElementNames():
                charts.removeByName(chart_name)
            sheets.removeByName(name)
        elif kind != prefix:
            kept.append(entry)
    set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(kept))
    timed("remove", started)


#: Sheets of a former run kept for this run to fill, by name: (sheet, rows
#: frozen on it). Inserting and removing sheets is the slow part of writing,
#: so a rerun writes over its former sheets and clears only what is left.
REUSABLE = {}
#: Every com.sun.star.sheet.CellFlags but OBJECTS (charts are removed apart).
CLEAR_ALL_BUT_OBJECTS = 1023 - 512
#: com.sun.star.sheet.CellFlags HARDATTR + STYLES + EDITATTR: formats only.
CLEAR_FORMATS = 32 + 64 + 256


def own_entry(entry):
    """(kind, name, frozen rows) of one line of the own-sheets property."""
    parts = entry.split("\t")
    kind = parts[0]
    name = parts[1] if len(parts) > 1 else ""
    try:
        frozen = int(parts[2]) if len(parts) > 2 else -1
    except ValueError:
        frozen = -1
    return kind, name, frozen


def clear_own_sheets(document, kinds):
    """Keeps the sheets a former run of these kinds wrote for this run to
    write over; returns how many."""
    started = time.perf_counter()
    sheets = document.getSheets()
    kept = []
    REUSABLE.clear()
    for entry in own_sheets(document):
        kind, name, frozen = own_entry(entry)
        if kind in kinds and sheets.hasByName(name):
            # Its charts stay: the next run redraws them in place (removing
            # and adding charts is slow), and removes those it does not draw.
            REUSABLE[name] = (sheets.getByName(name), frozen)
        elif kind not in kinds:
            kept.append(entry)
    set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(kept))
    timed("clear", started)
    return len(REUSABLE)


def remove_unused_sheets(document):
    """Removes the sheets of a former run that this run did not fill."""
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
    """A new sheet recorded as the add-in's own (the former run's sheet of
    this name when there is one); returns (sheet, name, rows frozen on it
    before, or -1 for a new sheet)."""
    sheets = document.getSheets()
    frozen = -1
    if name[:MAX_SHEET_NAME] in REUSABLE:
        name = name[:MAX_SHEET_NAME]
        sheet, frozen = REUSABLE.pop(name)
    else:
        name = free_sheet_name(sheets, name)
        sheets.insertNewByName(name, sheets.getCount() if position is None else position)
        sheet = sheets.getByName(name)
    return sheet, name, frozen


#: Sheets written in this run, recorded in the document once at the end
#: of writing (see quiet_document): setting a document property per sheet
#: notifies every listener each time.
NEW_OWN_SHEETS = []


def record_own_sheet(document, kind, name, frozen):
    NEW_OWN_SHEETS.append("%s\t%s\t%d" % (kind, name, frozen))


def flush_own_sheets(document):
    if NEW_OWN_SHEETS:
        entries = own_sheets(document) + NEW_OWN_SHEETS
        set_user_property(document, OWN_SHEETS_PROPERTY, "\n".join(entries))
        del NEW_OWN_SHEETS[:]


def cell_ranges(document, addresses):
    """One object for many ranges, so that a property is set in one call."""
    ranges = document.createInstance("com.sun.star.sheet.SheetCellRanges")
    ranges.addRangeAddresses(tuple(addresses), False)
    return ranges


def format_blocks(formats, n_rows, n_cols):
    """The number-format codes as rectangles: {code: [[first col, first row,
    last col, last row], ...]}: runs of one code down each column, joined
    across neighbouring columns with the same run. 'General' is left out."""
    blocks = {}
    open_runs = {}
    for col in range(n_cols):
        runs = []
        run_start, run_code = 0, None
        for row in range(n_rows + 1):
            code = formats[row][col] if row < n_rows and row < len(formats) and col < len(formats[row]) else None
            if code != run_code:
                if run_code not in (None, "General"):
                    runs.append((run_start, row - 1, run_code))
                run_start, run_code = row, code
        next_open = {}
        for run in runs:
            block = open_runs.get(run)
            if block is not None:
                block[2] = col
            else:
                block = [col, run[0], col, run[1]]
                blocks.setdefault(run[2], []).append(block)
            next_open[run] = block
        open_runs = next_open
    return blocks


def write_table(document, controller, table, kind, format_cache):
    """One table of the protocol's answer into a sheet of its own; returns
    its name. A former run's sheet of the same name is written over: the
    new values and formats go on in one call per property, and only the
    cells the new table does not cover are cleared."""
    started = time.perf_counter()
    sheet, name, frozen_before = add_sheet(document, table["name"], kind)
    timed("sheets", started)
    values = table.get("values") or []
    n_rows = len(values)
    n_cols = max((len(row) for row in values), default=0)
    index = sheet.getRangeAddress().Sheet
    started = time.perf_counter()
    if frozen_before >= 0:
        clear_beyond(sheet, n_rows, n_cols)
    timed("clear", started)
    frozen = int(table.get("frozenRows") or 0)
    if not values:
        record_own_sheet(document, kind, name, frozen_before if frozen_before >= 0 else 0)
        return name
    started = time.perf_counter()
    rows = tuple(
        tuple("" if value is None else value for value in list(row) + [None] * (n_cols - len(row)))
        for row in values
    )
    target = sheet.getCellRangeByPosition(0, 0, n_cols - 1, n_rows - 1)
    if frozen_before >= 0:
        target.clearContents(CLEAR_FORMATS)
    target.setDataArray(rows)
    timed("values", started)
    started = time.perf_counter()
    # Number formats: one property set per code, over all its rectangles.
    for code, blocks in format_blocks(table.get("numberFormats") or [], n_rows, n_cols).items():
        key = number_format_key(document, code, format_cache)
        addresses = [CellRangeAddress(index, c0, r0, c1, r1) for c0, r0, c1, r1 in blocks]
        cell_ranges(document, addresses).NumberFormat = key
    timed("formats: numbers", started)
    headers = [row for row in table.get("headerRows") or [] if row < n_rows]
    if headers:
        cell_ranges(document, [CellRangeAddress(index, 0, row, n_cols - 1, row) for row in headers]).CharWeight = BOLD
    timed("formats: bold", started)
    # Widths: one property set per run of neighbouring columns of one width.
    for first, last, width in width_runs(table.get("columnWidths") or []):
        sheet.getCellRangeByPosition(first, 0, last, 0).getColumns().Width = width
    timed("formats", started)
    started = time.perf_counter()
    # Freezing works on the active sheet only; a sheet written over keeps
    # its frozen rows, so only a new sheet or a new count needs the switch.
    if frozen != max(frozen_before, 0) and controller is not None:
        controller.setActiveSheet(sheet)
        controller.freezeAtPosition(0, frozen)
    timed("freeze", started)
    record_own_sheet(document, kind, name, frozen)
    return name


def width_runs(widths):
    """[(first col, last col, width in 1/100 mm)] for neighbouring columns of
    one width, from the protocol's [(col, width in characters)]."""
    runs = []
    for col, characters in sorted((int(col), characters) for col, characters in widths):
        width = int(characters * CHARACTER_WIDTH)
        if col >= MAX_COLUMNS:
            continue
        if runs and runs[-1][1] == col - 1 and runs[-1][2] == width:
            runs[-1] = (runs[-1][0], col, width)
        else:
            runs.append((col, col, width))
    return runs


def clear_beyond(sheet, n_rows, n_cols):
    """Clears a written-over sheet's cells outside the first n_rows x n_cols."""
    cursor = sheet.createCursor()
    cursor.gotoEndOfUsedArea(False)
    end = cursor.getRangeAddress()
    if end.EndColumn >= n_cols:
        sheet.getCellRangeByPosition(n_cols, 0, end.EndColumn, end.EndRow).clearContents(CLEAR_ALL_BUT_OBJECTS)
    if end.EndRow >= n_rows and n_cols > 0:
        last_col = min(n_cols - 1, end.EndColumn)
        sheet.getCellRangeByPosition(0, n_rows, last_col, end.EndRow).clearContents(CLEAR_ALL_BUT_OBJECTS)


def draw_charts(document, tables, names):
    """The charts of each table, drawn once every table is written (a
    chart's data may sit on a sheet written after its own)."""
    started = time.perf_counter()
    renamed = {table["name"]: name for table, name in zip(tables, names)}
    for table, name in zip(tables, names):
        sheet = document.getSheets().getByName(name)
        charts = sheet.getCharts()
        former = set(charts.getElementNames())
        for number, chart in enumerate(table.get("charts") or [], 1):
            former.discard(chart_name_of(number))
            try:
                add_chart(document, sheet, name, chart, number, renamed)
            except Exception as error:
                # A chart the office cannot draw leaves the tables in place.
                CHART_PROBLEMS.append("%s chart %d: %s" % (name, number, getattr(error, "Message", error)))
        # A former run's charts this run has no place for.
        for chart_name in former:
            charts.removeByName(chart_name)
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


def chart_name_of(number):
    return "trialyst chart %d" % number


def place_chart_shape(sheet, chart_name, rectangle):
    """Moves and sizes the drawing shape of a chart already on the sheet."""
    page = sheet.getDrawPage()
    for index in range(page.getCount()):
        shape = page.getByIndex(index)
        if getattr(shape, "PersistName", None) == chart_name:
            position, size = shape.getPosition(), shape.getSize()
            if (position.X, position.Y, size.Width, size.Height) != (rectangle.X, rectangle.Y, rectangle.Width, rectangle.Height):
                shape.setPosition(uno.createUnoStruct("com.sun.star.awt.Point", rectangle.X, rectangle.Y))
                shape.setSize(uno.createUnoStruct("com.sun.star.awt.Size", rectangle.Width, rectangle.Height))
            return


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
    chart_name = chart_name_of(number)
    kind = chart.get("kind")
    diagram_service = {
        "scatter": "com.sun.star.chart.XYDiagram",
        "columns": "com.sun.star.chart.BarDiagram",
    }.get(kind, "com.sun.star.chart.LineDiagram")
    if charts.hasByName(chart_name):
        # A former run's chart in this place: new ranges, place and kind.
        table_chart = charts.getByName(chart_name)
        table_chart.setRanges(tuple(ranges))
        place_chart_shape(sheet, chart_name, rectangle)
        embedded = table_chart.getEmbeddedObject()
        if not embedded.getDiagram().supportsService(diagram_service):
            embedded.setDiagram(embedded.createInstance(diagram_service))
    else:
        charts.addNewByName(chart_name, rectangle, tuple(ranges), False, True)
        embedded = charts.getByName(chart_name).getEmbeddedObject()
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
