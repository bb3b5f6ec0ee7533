#!/usr/bin/python3
"""End-to-end test of the add-in in LibreOffice Calc, headless.

Run by run-e2e.sh (as an unprivileged user, with the extension installed in
a throwaway profile); needs the system Python with the uno module.

    e2e_office.py --profile DIR --program TRIALYST --samples DIR --work DIR [--picture PNG]

Starts the office headless, opens copies of the sample workbooks, selects
ranges, runs each command through the dispatcher (and once through the menu
bar's own entry), checks the new sheets against `trialyst run --json` for
the same data, the number formats, bold headers and frozen rows, the
comments at the cells of the data problems, a rerun replacing its sheets,
cancel, an error case, the sidecar's exit when the document closes and
when the office is killed, saving as xlsx and ods and reading both back.
Prints one line per check and a timing summary; exits 1 on any failure.
"""

import argparse
import faulthandler
import json
import os
import shutil
import signal
import subprocess
import sys
import threading
import time

import uno
from com.sun.star.beans import PropertyValue

FAILURES = []
TIMINGS = {}


#: Seconds a single command may take before the office is taken to hang.
DISPATCH_LIMIT = 240
#: Seconds the whole test may take (it takes under a minute).
WHOLE_TEST_LIMIT = 1200


def check(condition, what):
    print(("ok   " if condition else "FAIL ") + what, flush=True)
    if not condition:
        FAILURES.append(what)
    return condition


def props(**values):
    out = []
    for name, value in values.items():
        item = PropertyValue()
        item.Name, item.Value = name, value
        out.append(item)
    return tuple(out)


def pid_alive(pid):
    try:
        os.kill(pid, 0)
    except OSError:
        return False
    try:
        with open("/proc/%d/stat" % pid) as handle:
            return handle.read().split(")")[-1].split()[0] != "Z"
    except OSError:
        return False


def wait_for(predicate, seconds):
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(0.05)
    return predicate()


class Office:
    def __init__(self, profile, pipe):
        self.profile = profile
        self.pipe = pipe
        self.process = None

    def start(self, environment, display=None):
        """Starts the office headless, or with windows on `display`."""
        if display:
            environment = dict(environment, DISPLAY=display)
        self.errors = subprocess.DEVNULL
        if display:
            self.errors = open(self.profile + "-office-errors.txt", "wb")
        self.process = subprocess.Popen(
            [
                "soffice",
                "-env:UserInstallation=" + uno.systemPathToFileUrl(self.profile),
                "--nodefault" if display else "--headless",
                "--invisible",
                "--norestore",
                "--nologo",
                "--accept=pipe,name=%s;urp;" % self.pipe,
            ],
            env=environment,
            stdout=subprocess.DEVNULL,
            stderr=self.errors,
            start_new_session=True,
        )
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
        deadline = time.monotonic() + 90
        while True:
            try:
                self.ctx = resolver.resolve(
                    "uno:pipe,name=%s;urp;StarOffice.ComponentContext" % self.pipe
                )
                break
            except Exception:
                if time.monotonic() > deadline or self.process.poll() is not None:
                    if self.errors is not subprocess.DEVNULL:
                        self.errors.close()
                        with open(self.errors.name, "rb") as handle:
                            print("the office ended with %s: %s" % (self.process.poll(), handle.read()[-2000:].decode("utf-8", "replace")))
                    raise
                time.sleep(0.3)
        self.smgr = self.ctx.ServiceManager
        self.desktop = self.smgr.createInstanceWithContext("com.sun.star.frame.Desktop", self.ctx)
        self.dispatcher = self.smgr.createInstanceWithContext("com.sun.star.frame.DispatchHelper", self.ctx)

    def open(self, path):
        return self.desktop.loadComponentFromURL(uno.systemPathToFileUrl(path), "_blank", 0, props(Hidden=False))

    def run(self, document, command, **arguments):
        frame = document.getCurrentController().getFrame()
        started = time.perf_counter()
        result = self.dispatch(frame, "org.trialyst.addin:" + command, arguments)
        elapsed = (time.perf_counter() - started) * 1000
        result = getattr(result, "Result", result)
        answer = json.loads(result) if isinstance(result, str) and result else {"ok": False, "error": repr(result)}
        answer["wall_ms"] = elapsed
        return answer

    def dispatch(self, frame, url, arguments=None, helper=None, limit=DISPATCH_LIMIT):
        """Runs a command through `helper` (the office's dispatch helper by
        default; a second command sent while one runs needs a helper of its
        own, as a helper keeps one call's state). A dispatch that has not finished within `limit` seconds is reported
        with every thread's stack and the add-in's log, and the office is
        killed so that the test goes on (and fails) instead of waiting."""
        helper = helper or self.dispatcher
        timer = threading.Timer(limit, self.hung, (url, limit))
        timer.daemon = True
        timer.start()
        try:
            return helper.executeDispatch(frame, url, "", 0, props(**(arguments or {})))
        finally:
            timer.cancel()

    def hung(self, url, limit):
        check(False, "%s finished within %d s (the office was killed; stacks follow)" % (url, limit))
        faulthandler.dump_traceback(all_threads=True)
        log = os.path.join(self.profile, "user", "trialyst-addin.log")
        if os.path.exists(log):
            with open(log, encoding="utf-8", errors="replace") as handle:
                print("--- the add-in's log, last lines\n" + "".join(handle.readlines()[-30:]), flush=True)
        self.kill()

    def kill(self):
        if self.process and self.process.poll() is None:
            # The office's whole process group (the launcher and soffice.bin).
            os.killpg(os.getpgid(self.process.pid), signal.SIGKILL)
            self.process.wait(10)


def select(document, sheet_name, cells):
    controller = document.getCurrentController()
    sheet = document.getSheets().getByName(sheet_name)
    controller.setActiveSheet(sheet)
    controller.select(sheet.getCellRangeByName(cells))


def sheet_values(document, name):
    sheet = document.getSheets().getByName(name)
    cursor = sheet.createCursor()
    cursor.gotoEndOfUsedArea(False)
    end = cursor.getRangeAddress()
    return sheet.getCellRangeByPosition(0, 0, end.EndColumn, end.EndRow).getDataArray()


def close_enough(a, b):
    return abs(a - b) <= 1e-9 * max(1.0, abs(b))


def run_json(program, path):
    output = subprocess.run(
        [program, "run", "--json", "--no-write", path], capture_output=True, text=True, check=False
    ).stdout
    return json.loads(output.splitlines()[0])


def contains_row(values, label, number):
    for row in values:
        if label in row and any(isinstance(cell, float) and close_enough(cell, number) for cell in row):
            return True
    return False


def format_code(document, cell):
    return document.getNumberFormats().getByKey(cell.NumberFormat).FormatString


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--profile", required=True)
    parser.add_argument("--program", required=True)
    parser.add_argument("--samples", required=True)
    parser.add_argument("--work", required=True)
    parser.add_argument("--picture")
    parser.add_argument("--display", help="an X display (Xvfb) for the checks that need the office's windows")
    arguments = parser.parse_args()
    # The last guard against a hang the per-command limit does not cover
    # (a call into the office that never returns): every thread's stack is
    # printed and the test ends with a failure.
    faulthandler.dump_traceback_later(WHOLE_TEST_LIMIT, exit=True)
    work = arguments.work
    environment = dict(os.environ, TRIALYST_PROGRAM="")
    office = Office(arguments.profile, "trialyst-e2e-%d" % os.getpid())
    office.start(environment)
    try:
        run_checks(office, arguments, work)
    finally:
        try:
            office.desktop.terminate()
        except Exception:
            pass
        try:
            office.process.wait(20)
        except subprocess.TimeoutExpired:
            office.kill()
    if arguments.display:
        run_with_display(arguments, work, environment)
    else:
        print("no display given: the menu click, the options page and the dialogs are not checked")
    print("timings: " + json.dumps(TIMINGS))
    if FAILURES:
        print("%d checks failed" % len(FAILURES))
        return 1
    print("all checks passed")
    return 0


def run_with_display(arguments, work, environment):
    """A second office, with windows on the display, for the checks that
    need them (e2e_gui.py)."""
    import e2e_gui

    # The office killed at the end of the headless checks left its lock.
    lock = os.path.join(arguments.profile, ".lock")
    if os.path.exists(lock):
        os.remove(lock)
    office = Office(arguments.profile, "trialyst-e2e-gui-%d" % os.getpid())
    try:
        office.start(environment, display=arguments.display)
    except Exception as error:
        # The launcher sometimes ends at once after an office was killed on
        # the same profile; a second start finds it free.
        print("the office with a display did not start (%r); starting it again" % error)
        office.kill()
        time.sleep(2)
        office.start(environment, display=arguments.display)
    try:
        helpers = {"select": select, "sheet_values": sheet_values, "props": props}
        e2e_gui.run_gui_checks(office, arguments, work, check, helpers)
    except Exception as error:
        check(False, "the checks with windows ran to the end: %r" % error)
    finally:
        try:
            office.desktop.terminate()
        except Exception:
            pass
        try:
            office.process.wait(20)
        except subprocess.TimeoutExpired:
            office.kill()


def set_program_setting(office, program):
    provider = office.smgr.createInstanceWithContext("com.sun.star.configuration.ConfigurationProvider", office.ctx)
    access = provider.createInstanceWithArguments(
        "com.sun.star.configuration.ConfigurationUpdateAccess", props(nodepath="/org.trialyst.addin.Settings/Sidecar")
    )
    access.replaceByName("ProgramPath", program)
    access.commitChanges()


def run_checks(office, arguments, work):
    program = arguments.program
    # The options page's setting is the first place the add-in looks.
    set_program_setting(office, program)

    # 1. Analyse a one-factor trial (wide layout), from a single cell.
    coating = os.path.join(work, "coating.xlsx")
    shutil.copy(os.path.join(arguments.samples, "coating-cure-profiles.xlsx"), coating)
    expected = run_json(program, coating)
    document = office.open(coating)
    select(document, "Adhesion", "B3")
    answer = office.run(document, "analyse")
    check(answer.get("ok"), "analyse from one cell grown to its region: %s" % answer.get("error", answer.get("sheets")))
    sheets = answer.get("sheets", [])
    check(len(sheets) >= 3, "analyse wrote result sheets: %s" % sheets)
    pid = answer.get("sidecarPid")
    check(pid and pid_alive(pid), "the sidecar runs while the document is open (pid %s)" % pid)
    one_way = expected["responses"][0]["one_way"]
    all_values = {name: sheet_values(document, name) for name in sheets}
    for condition in one_way["conditions"]:
        found = any(contains_row(values, condition["name"], condition["mean"]) for values in all_values.values())
        check(found, "mean of '%s' = %.6g as run --json gives" % (condition["name"], condition["mean"]))
    f_value = one_way["anova"][0]["f"]
    found_f = any(
        isinstance(cell, float) and close_enough(cell, f_value)
        for values in all_values.values()
        for row in values
        for cell in row
    )
    check(found_f, "ANOVA F = %.6g as run --json gives" % f_value)
    # Formats: a sheet with a frozen header row and bold headers, numbers with our formats.
    formatted = False
    for name in sheets:
        sheet = document.getSheets().getByName(name)
        values = all_values[name]
        for row_index, row in enumerate(values[:12]):
            for col_index, cell in enumerate(row):
                if isinstance(cell, float) and not float(cell).is_integer():
                    code = format_code(document, sheet.getCellByPosition(col_index, row_index))
                    if code not in ("General", "Standard"):
                        formatted = True
    check(formatted, "result numbers carry number formats other than General")
    bold = False
    for name in sheets:
        sheet = document.getSheets().getByName(name)
        for row_index in range(0, 6):
            if sheet.getCellByPosition(0, row_index).CharWeight >= 150 and sheet.getCellByPosition(0, row_index).getString():
                bold = True
    check(bold, "header rows are bold")
    controller = document.getCurrentController()
    frozen = False
    for name in sheets:
        controller.setActiveSheet(document.getSheets().getByName(name))
        if controller.hasFrozenPanes():
            frozen = True
    check(frozen, "a result sheet has frozen rows")
    count_before = document.getSheets().getCount()
    select(document, "Adhesion", "B3")
    answer = office.run(document, "analyse")
    check(
        answer.get("ok") and document.getSheets().getCount() == count_before,
        "a rerun replaces its own sheets (%d sheets before, %d after): %s"
        % (count_before, document.getSheets().getCount(), answer.get("error", answer.get("sheets"))),
    )
    TIMINGS["3x5-like analyse warm (ms, in the add-in)"] = answer.get("ms")

    # Picture for the README: the first result sheet as PNG.
    if arguments.picture:
        # The table of conditions: numbers in their formats, bold headers.
        shown = document.getSheets().getByName("Conditions" if "Conditions" in sheets else sheets[0])
        controller.setActiveSheet(shown)
        cursor = shown.createCursor()
        cursor.gotoEndOfUsedArea(False)
        end = cursor.getRangeAddress()
        area = shown.getCellRangeByPosition(0, 0, min(end.EndColumn, 7), min(end.EndRow, 40))
        pdf = os.path.join(work, "picture.pdf")
        document.storeToURL(
            uno.systemPathToFileUrl(pdf),
            props(FilterName="calc_pdf_Export", FilterData=uno.Any("[]com.sun.star.beans.PropertyValue", props(Selection=area))),
        )
        subprocess.run(["pdftoppm", "-png", "-r", "110", "-singlefile", pdf, arguments.picture[: -len(".png")]], check=False)
        check(os.path.exists(arguments.picture) and os.path.getsize(arguments.picture) > 1000, "picture of the result sheet written")

    # Save as xlsx and ods and read both back, against the sheets as saved (the
    # rerun's Summary carries its own time of analysis).
    all_values = {name: sheet_values(document, name) for name in sheets}
    for extension, filter_name in (("xlsx", "Calc MS Excel 2007 XML"), ("ods", "calc8")):
        saved = os.path.join(work, "saved." + extension)
        document.storeToURL(uno.systemPathToFileUrl(saved), props(FilterName=filter_name))
        back = office.open(saved)
        back_names = back.getSheets().getElementNames()
        same = all(name in back_names for name in sheets)
        first = sheets[0]
        read_back = sheet_values(back, first) if same else []
        differing = [
            (row, before, after)
            for row, (before, after) in enumerate(zip(all_values[first], read_back))
            if before != after
        ]
        if len(read_back) != len(all_values[first]):
            differing.append(("rows", len(all_values[first]), len(read_back)))
        check(
            same and not differing,
            "saved as %s and read back: sheets and values of '%s' the same%s"
            % (extension, first, "" if not differing else "; differing rows: %r" % differing[:3]),
        )
        back.close(True)

    # Close the document: its sidecar ends.
    document.close(True)
    check(wait_for(lambda: not pid_alive(pid), 10), "the sidecar (pid %s) ended when its document closed" % pid)

    # 2. Data problems marked on their cells; inspect; marks cleared after a fix.
    tensile = os.path.join(work, "tensile.xlsx")
    shutil.copy(os.path.join(arguments.samples, "resin-supplier-tensile.xlsx"), tensile)
    expected = run_json(program, tensile)
    document = office.open(tensile)
    select(document, "Tensile", "A:D")
    answer = office.run(document, "inspect")
    check(answer.get("ok"), "inspect of whole columns shrunk to the used area: %s" % answer.get("error", ""))
    # The office's cell values carry no date or TRUE/FALSE type (both are
    # numbers with a format), so the findings about those cells, and the
    # ones that follow from them (conditions left with one value or none), are
    # found in the file by `run` but cannot be in the cells the add-in sends.
    typed = ("date", "TRUE/FALSE", "only one value", "no usable value")
    expected["findings"] = [f for f in expected["findings"] if not any(word in f["message"] for word in typed)]
    expected["findings"] = [f for f in expected["findings"] if any(ch.isdigit() for ch in f.get("cell") or "")]
    check(answer.get("findings", 0) >= len(expected["findings"]), "inspect finds %s problems, run --json %d of the kinds cells carry" % (answer.get("findings"), len(expected["findings"])))
    annotations = document.getSheets().getByName("Tensile").getAnnotations()
    marked = {}
    for index in range(annotations.getCount()):
        note = annotations.getByIndex(index)
        address = note.getPosition()
        marked[uno_a1(address.Column, address.Row)] = note.getString()
    for finding in expected["findings"]:
        cell = (finding.get("cell") or "").split(":")[0]
        if cell and finding.get("sheet") == "Tensile":
            check(cell in marked and finding["message"] in marked[cell], "comment at Tensile!%s: %s" % (cell, finding["message"][:60]))
    check("Data problems" in document.getSheets().getElementNames(), "the data problems are listed on their own sheet")
    # Fix the text 'n/a' cell and analyse again: its mark goes.
    text_finding = [f for f in expected["findings"] if f.get("kind") == "text-in-numbers"]
    if text_finding:
        cell = text_finding[0]["cell"]
        document.getSheets().getByName("Tensile").getCellRangeByName(cell).setValue(50.0)
        select(document, "Tensile", "A:D")
        answer = office.run(document, "analyse")
        marked_after = set()
        for index in range(annotations.getCount()):
            address = annotations.getByIndex(index).getPosition()
            marked_after.add(uno_a1(address.Column, address.Row))
        check(answer.get("ok") and cell not in marked_after, "after fixing %s and analysing again its mark is gone" % cell)
    # An error cell is sent as its text and marked.
    sheet = document.getSheets().getByName("Tensile")
    sheet.getCellRangeByName("B5").setFormula("=1/0")
    select(document, "Tensile", "A:D")
    answer = office.run(document, "inspect")
    note_text = ""
    for index in range(annotations.getCount()):
        note = annotations.getByIndex(index)
        if uno_a1(note.getPosition().Column, note.getPosition().Row) == "B5":
            note_text = note.getString()
    check("#DIV/0!" in note_text, "an error cell is sent as its text and marked: %s" % note_text[:80])
    document.close(True)

    # 3. Plan and size, through the dispatcher with arguments (no dialog headless).
    document = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    answer = office.run(
        document, "plan", Factors="Temperature: 160, 180\nPressure: 2, 3\nLine speed: 10, 14", Responses="Yield, Haze", CentrePoints=2, Seed=7
    )
    check(answer.get("ok") and answer.get("runs") == 10, "plan: 2^3 with 2 centre runs gives 10 runs: %s" % answer)
    if answer.get("ok"):
        runs_sheet = sheet_values(document, answer["sheets"][0])
        check(any("Temperature" in row for row in runs_sheet), "the plan sheet has the factor columns")
    answer = office.run(document, "size", Conditions=3, SmallestDifference=1.0, SD=0.5, Power=0.8)
    # Source: the needed runs per condition come from the service's own size answer (CLI `trialyst size`).
    cli = subprocess.run(
        [program, "size", "--conditions", "3", "--difference", "1", "--sd", "0.5", "--power", "0.8", "--json"],
        capture_output=True, text=True, check=False,
    ).stdout
    try:
        cli_needed = json.loads(cli)["needed"]["count"]
    except (ValueError, KeyError):
        cli_needed = None
    check(answer.get("ok") and answer.get("needed", {}).get("count") == cli_needed, "size: runs per condition %s, as trialyst size --json says %s" % (answer.get("needed"), cli_needed))

    # 4. An error case: plan without responses is refused with a message, and the dispatch finishes.
    answer = office.run(document, "plan", Factors="Temperature: 160, 180", Responses="")
    check(answer.get("ok") is False and "response" in answer.get("error", ""), "a plan without a response fails with a message: %s" % answer.get("error"))
    document.close(True)

    # 5. Large data: 20 x 5000 warm, cancel, and the menu bar entry.
    document = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    sheet = document.getSheets().getByIndex(0)
    header = tuple("Line %d" % (index + 1) for index in range(20))
    rows = [header] + [
        tuple(10.0 + ((row * 7919 + col * 104729) % 1000) / 1000.0 + 0.05 * col for col in range(20))
        for row in range(5000)
    ]
    sheet.getCellRangeByPosition(0, 0, 19, 5000).setDataArray(tuple(rows))
    select(document, sheet.getName(), "A1:T5001")
    first = office.run(document, "analyse")
    select(document, sheet.getName(), "A1:T5001")
    warm = office.run(document, "analyse")
    check(warm.get("ok"), "20 x 5000 analysed: %s" % warm.get("error", warm.get("sheets")))
    TIMINGS["20x5000 analyse first (ms)"] = first.get("ms")
    TIMINGS["20x5000 analyse warm (ms, in the add-in)"] = warm.get("ms")
    TIMINGS["20x5000 warm parts (ms)"] = {key: warm.get(key) for key in ("readMs", "requestMs", "writeMs", "writeParts")}
    select(document, sheet.getName(), "A1:T5001")
    menu_answer = dispatch_through_menu(office, document)
    check(
        menu_answer is not None and menu_answer.get("ok"),
        "the Data menu holds trialyst's entry and it runs: %s" % menu_answer,
    )
    document.close(True)

    # Small table (3 x 5) warm timing.
    document = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    sheet = document.getSheets().getByIndex(0)
    sheet.getCellRangeByPosition(0, 0, 2, 5).setDataArray(
        (("Old", "New", "Trial"), (12.1, 12.6, 12.2), (12.0, 12.9, 12.4), (12.3, 12.8, 12.1), (11.9, 12.7, 12.3), (12.2, 12.5, 12.0))
    )
    select(document, sheet.getName(), "A1")
    office.run(document, "analyse")
    times = []
    for _ in range(5):
        select(document, sheet.getName(), "A1")
        answer = office.run(document, "analyse")
        times.append(answer.get("ms", 0))
    TIMINGS["3x5 last run parts (ms)"] = {key: answer.get(key) for key in ("readMs", "requestMs", "writeMs", "writeParts")}
    times.sort()
    TIMINGS["3x5 analyse warm median (ms, in the add-in)"] = times[2]
    check_cancel(office, document)
    select(document, sheet.getName(), "A1")
    pid = office.run(document, "inspect").get("sidecarPid")
    # A killed office: the sidecar must not outlive it.
    office.kill()
    check(wait_for(lambda: not pid_alive(pid), 10), "the sidecar (pid %s) ended when the office was killed" % pid)


def check_cancel(office, document):
    """Stop: a cancel sent while a request runs ends it as cancelled. The
    add-in's stop command is dispatched from a second thread while the
    first dispatch waits. A stop that arrives before the request is sent or
    after its answer has nothing to cancel, so it is tried at a few delays
    and must cancel at least once."""
    sheet = document.getSheets().getByIndex(0)
    header = tuple("Line %d" % (index + 1) for index in range(40))
    rows = [header] + [
        tuple(10.0 + ((row * 7919 + col * 104729) % 1000) / 1000.0 for col in range(40)) for row in range(20000)
    ]
    sheet.getCellRangeByPosition(0, 0, 39, 20000).setDataArray(tuple(rows))
    # A helper of its own: one dispatch helper keeps one call's state.
    helper = office.smgr.createInstanceWithContext("com.sun.star.frame.DispatchHelper", office.ctx)
    frame = document.getCurrentController().getFrame()
    tries = []
    for delay in (0.3, 0.15, 0.5, 0.8):
        select(document, sheet.getName(), "A1:AN20001")
        outcome = {}

        def analyse():
            outcome["answer"] = office.run(document, "analyse")

        worker = threading.Thread(target=analyse, daemon=True)
        worker.start()
        time.sleep(delay)
        stopped = json.loads(getattr(office.dispatch(frame, "org.trialyst.addin:stop", helper=helper), "Result", "") or "{}")
        worker.join(DISPATCH_LIMIT)
        answer = outcome.get("answer", {})
        tries.append((delay, stopped.get("stopped"), {k: answer.get(k) for k in ("ok", "cancelled", "error", "ms")}))
        if answer.get("cancelled") is True:
            break
    check(
        tries[-1][2].get("cancelled") is True and tries[-1][2].get("ok") is False,
        "stop cancels the running analysis (delay s, stop said, analyse said): %s" % tries,
    )


def dispatch_through_menu(office, document):
    """Finds the entry in the Data menu of the document's menu bar and runs
    its command as a click would: through the frame's dispatch."""
    frame = document.getCurrentController().getFrame()
    layout = frame.LayoutManager
    element = layout.getElement("private:resource/menubar/menubar")
    if element is None:
        return None
    menubar = element.getRealInterface()
    if not hasattr(menubar, "getItemCount"):
        # Headless, the menu bar has no window of its own: its item
        # container (with the add-on entries merged) is searched instead.
        # Headless, the menu bar has no menu of its own to walk (its real
        # interface is only the manager). The entry is then looked up where
        # the office merges it into the Data menu from: the installed
        # extension's menu-merging configuration, as the office reads it.
        types = [t.typeName for t in getattr(menubar, "Types", ())] if menubar is not None else None
        print("headless menu bar (real interface types: %s); using the office's merged menu configuration" % types)
        command = merged_menu_command(office, "org.trialyst.addin:inspect")
        if command is None:
            return None
        answer = office.dispatch(frame, command)
        answer = getattr(answer, "Result", answer)
        return json.loads(answer) if answer else None
    for position in range(menubar.getItemCount()):
        item_id = menubar.getItemId(position)
        if menubar.getCommand(item_id) != ".uno:DataMenu":
            continue
        data = menubar.getPopupMenu(item_id)
        for inner in range(data.getItemCount()):
            inner_id = data.getItemId(inner)
            sub = data.getPopupMenu(inner_id)
            if data.getItemText(inner_id).replace("~", "") != "trialyst" or sub is None:
                continue
            for index in range(sub.getItemCount()):
                entry = sub.getItemId(index)
                if sub.getCommand(entry) == "org.trialyst.addin:inspect":
                    answer = office.dispatch(frame, sub.getCommand(entry))
                    answer = getattr(answer, "Result", answer)
                    return json.loads(answer) if answer else None
    return None


def merged_menu_command(office, wanted):
    """`wanted` when the office's add-on menu merging puts it under the Data menu."""
    provider = office.smgr.createInstanceWithContext("com.sun.star.configuration.ConfigurationProvider", office.ctx)
    merging = provider.createInstanceWithArguments(
        "com.sun.star.configuration.ConfigurationAccess",
        props(nodepath="/org.openoffice.Office.Addons/AddonUI/OfficeMenuBarMerging"),
    )
    for name in merging.getElementNames():
        group = merging.getByName(name)
        for instruction_name in group.getElementNames():
            instruction = group.getByName(instruction_name)
            if not instruction.getByName("MergePoint").startswith(".uno:DataMenu"):
                continue
            if find_menu_item(instruction.getByName("MenuItems"), wanted):
                return wanted
    return None


def find_menu_item(items, wanted):
    for name in items.getElementNames():
        item = items.getByName(name)
        if item.getByName("URL") == wanted:
            return True
        if item.hasByName("Submenu") and find_menu_item(item.getByName("Submenu"), wanted):
            return True
    return False


def uno_a1(column, row):
    letters = ""
    column += 1
    while column:
        column, rest = divmod(column - 1, 26)
        letters = chr(65 + rest) + letters
    return "%s%d" % (letters, row + 1)


if __name__ == "__main__":
    sys.exit(main())
