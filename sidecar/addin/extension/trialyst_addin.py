"""trialyst inside LibreOffice Calc: the commands under Data > trialyst.

A protocol handler for `org.trialyst.addin:` command URLs:

- `analyse`  analyse the selected trial: result sheets and marked cells;
- `inspect`  inspect the selected trial: data problems only;
- `plan`     plan the next trial (dialog, or the dispatch's arguments);
- `size`     size the next trial (dialog, or the dispatch's arguments);
- `choices`  the choices sent with every analysis of this document;
- `stop`     stop the work under way.

One `trialyst serve` child per document, started on the first command and
closed when the document closes or the office ends; a killed office closes
the child's input, and the child ends by itself.

Every command finishes its dispatch: the listener gets a JSON text with
`ok`, the sheets written, the counts and the time taken, or the error.
Errors are shown in a message box unless the office runs headless; they are
always logged (trialyst-addin.log in the user profile's folder).
"""

import json
import os
import sys
import time
import traceback

import uno
import unohelper
from com.sun.star.document import XDocumentEventListener
from com.sun.star.frame import XDispatch, XDispatchProvider, XNotifyingDispatch, XTerminateListener
from com.sun.star.frame import DispatchResultEvent
from com.sun.star.lang import XInitialization, XServiceInfo
from com.sun.star.awt import XContainerWindowEventHandler

import trialyst_client
import trialyst_sheets
from trialyst_client import Cancelled, Sidecar, SidecarError

IMPLEMENTATION = "org.trialyst.addin.Commands"
OPTIONS_IMPLEMENTATION = "org.trialyst.addin.OptionsPage"
EXTENSION_ID = "org.trialyst.addin"
PROTOCOL = "org.trialyst.addin:"
SETTINGS_NODE = "/org.trialyst.addin.Settings/Sidecar"
#: Arguments the office adds to a dispatch of its own accord.
OFFICE_ARGUMENTS = ("SynchronMode", "Referer", "KeyModifier", "Frame")
SUCCESS = 1  # com.sun.star.frame.DispatchResultState.SUCCESS
FAILURE = 0

#: One sidecar per document, by the document's runtime id.
SIDECARS = {}
#: The request under way, so that `stop` can cancel it.
RUNNING = {"pending": None, "sidecar": None, "stop": False}
_TERMINATE_LISTENER = []


def is_headless():
    try:
        with open("/proc/self/cmdline", "rb") as handle:
            arguments = handle.read().split(b"\0")
        return any(argument.endswith(b"headless") for argument in arguments)
    except OSError:
        return False


def log_path(ctx):
    try:
        paths = ctx.ServiceManager.createInstanceWithContext("com.sun.star.util.PathSettings", ctx)
        folder = uno.fileUrlToSystemPath(paths.UserConfig)
        return os.path.join(os.path.dirname(folder), "trialyst-addin.log")
    except Exception:
        return os.path.join(os.path.expanduser("~"), "trialyst-addin.log")


def configured_program(ctx):
    try:
        provider = ctx.ServiceManager.createInstanceWithContext(
            "com.sun.star.configuration.ConfigurationProvider", ctx
        )
        access = provider.createInstanceWithArguments(
            "com.sun.star.configuration.ConfigurationAccess",
            trialyst_sheets.property_values(nodepath=SETTINGS_NODE),
        )
        return access.getByName("ProgramPath") or ""
    except Exception:
        return ""


def set_configured_program(ctx, path):
    provider = ctx.ServiceManager.createInstanceWithContext("com.sun.star.configuration.ConfigurationProvider", ctx)
    access = provider.createInstanceWithArguments(
        "com.sun.star.configuration.ConfigurationUpdateAccess",
        trialyst_sheets.property_values(nodepath=SETTINGS_NODE),
    )
    access.replaceByName("ProgramPath", path)
    access.commitChanges()


def shipped_folder(ctx):
    try:
        provider = ctx.getValueByName("/singletons/com.sun.star.deployment.PackageInformationProvider")
        location = provider.getPackageLocation(EXTENSION_ID)
        if location:
            folder = os.path.join(uno.fileUrlToSystemPath(location), "bin")
            program = os.path.join(folder, trialyst_client.PROGRAM_NAME)
            if os.path.isfile(program) and not os.access(program, os.X_OK):
                os.chmod(program, 0o755)
            return folder
    except Exception:
        pass
    return None


class DocumentWatch(unohelper.Base, XDocumentEventListener):
    """Closes a document's sidecar when the document closes."""

    def __init__(self, key, log):
        self.key = key
        self.log = log

    def documentEventOccured(self, event):
        if event.EventName in ("OnUnload", "OnPrepareUnload"):
            close_sidecar(self.key, self.log)

    def disposing(self, source):
        close_sidecar(self.key, self.log)


class OfficeWatch(unohelper.Base, XTerminateListener):
    """Closes every sidecar when the office ends."""

    def __init__(self, log):
        self.log = log

    def queryTermination(self, event):
        pass

    def notifyTermination(self, event):
        for key in list(SIDECARS):
            close_sidecar(key, self.log)

    def disposing(self, source):
        pass


def close_sidecar(key, log):
    sidecar = SIDECARS.pop(key, None)
    if sidecar is not None:
        pid = sidecar.pid
        sidecar.close()
        log("closed the sidecar (pid %s) of a document that closed" % pid)


def document_key(document):
    try:
        return document.RuntimeUID
    except Exception:
        return str(id(document))


class Commands(unohelper.Base, XDispatchProvider, XNotifyingDispatch, XInitialization, XServiceInfo):
    """The protocol handler: one instance per frame."""

    def __init__(self, ctx, *args):
        self.ctx = ctx
        self.frame = None
        self.indicator = None
        self.log = trialyst_client.log_to_file(log_path(ctx))

    # XInitialization
    def initialize(self, arguments):
        if arguments:
            self.frame = arguments[0]

    # XServiceInfo
    def getImplementationName(self):
        return IMPLEMENTATION

    def supportsService(self, name):
        return name == "com.sun.star.frame.ProtocolHandler"

    def getSupportedServiceNames(self):
        return ("com.sun.star.frame.ProtocolHandler",)

    # XDispatchProvider
    def queryDispatch(self, url, target, flags):
        if url.Protocol == PROTOCOL:
            return self
        return None

    def queryDispatches(self, requests):
        return tuple(self.queryDispatch(item.FeatureURL, item.FrameName, item.SearchFlags) for item in requests)

    # XDispatch
    def dispatch(self, url, arguments):
        self.dispatchWithNotification(url, arguments, None)

    def addStatusListener(self, listener, url):
        pass

    def removeStatusListener(self, listener, url):
        pass

    # XNotifyingDispatch
    def dispatchWithNotification(self, url, arguments, listener):
        command = url.Path
        # The office's own dispatch arguments (a dispatch helper's SynchronMode,
        # a menu's Referer and KeyModifier) are not the command's.
        arguments = {item.Name: item.Value for item in (arguments or ()) if item.Name not in OFFICE_ARGUMENTS}
        started = time.perf_counter()
        state, outcome = SUCCESS, {}
        try:
            handler = {
                "analyse": self.analyse,
                "inspect": self.inspect,
                "plan": self.plan,
                "size": self.size,
                "choices": self.choices,
                "stop": self.stop,
            }.get(command)
            if handler is None:
                raise SidecarError("unknown command '%s'" % command)
            outcome = handler(arguments) or {}
            outcome["ok"] = True
        except Cancelled:
            state, outcome = FAILURE, {"ok": False, "cancelled": True, "error": "the work was stopped"}
            self.status_text("trialyst: stopped")
        except Exception as error:
            message = getattr(error, "message", None) or str(error)
            state, outcome = FAILURE, {"ok": False, "error": message}
            self.log("%s failed: %s\n%s" % (command, message, traceback.format_exc()))
            self.show_error(message)
        outcome["command"] = command
        outcome["ms"] = round((time.perf_counter() - started) * 1000.0, 1)
        self.log("%s: %s" % (command, json.dumps(outcome)))
        if listener is not None:
            listener.dispatchFinished(DispatchResultEvent(self, state, json.dumps(outcome)))

    # -- helpers -------------------------------------------------------
    def document(self):
        document = self.frame.getController().getModel() if self.frame else None
        if document is None or not document.supportsService("com.sun.star.sheet.SpreadsheetDocument"):
            raise SidecarError("these commands work on a spreadsheet; open one and select the trial's cells")
        return document

    def show_error(self, message):
        if is_headless() or self.frame is None:
            return
        try:
            toolkit = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx)
            parent = self.frame.getContainerWindow()
            box = toolkit.createMessageBox(parent, uno.Enum("com.sun.star.awt.MessageBoxType", "ERRORBOX"), 1, "trialyst", message)
            box.execute()
        except Exception:
            self.log("could not show a message box: " + traceback.format_exc())

    def status_indicator(self):
        """The frame's status-bar indicator, made once per frame."""
        if self.indicator is None:
            self.indicator = self.frame.createStatusIndicator()
        return self.indicator

    def status_text(self, text):
        try:
            indicator = self.status_indicator()
            indicator.start(text, 0)
            indicator.end()
        except Exception:
            pass

    def sidecar(self, document):
        key = document_key(document)
        sidecar = SIDECARS.get(key)
        if sidecar is not None and sidecar.is_running():
            return sidecar
        program, where = trialyst_client.find_program(configured_program(self.ctx), shipped_folder(self.ctx))
        sidecar = Sidecar(program, self.log)
        sidecar.start()
        self.log("started the sidecar %s (found by the %s), pid %s" % (program, where, sidecar.pid))
        SIDECARS[key] = sidecar
        document.addDocumentEventListener(DocumentWatch(key, self.log))
        if not _TERMINATE_LISTENER:
            desktop = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", self.ctx)
            watch = OfficeWatch(self.log)
            desktop.addTerminateListener(watch)
            _TERMINATE_LISTENER.append(watch)
        return sidecar

    def run_request(self, sidecar, method, params, title):
        """Sends a request and waits for its answer while the office goes on
        handling its events; the status bar shows progress, and `stop`
        cancels."""
        indicator = None
        try:
            indicator = self.status_indicator()
            indicator.start("trialyst: " + title, 100)
        except Exception:
            indicator = None
        toolkit = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx)
        state = {"tick": 0}
        RUNNING["stop"] = False

        def between(pending):
            RUNNING["pending"], RUNNING["sidecar"] = pending, sidecar
            if RUNNING["stop"]:
                RUNNING["stop"] = False
                sidecar.cancel(pending)
            state["tick"] = (state["tick"] + 3) % 100
            if indicator is not None:
                indicator.setValue(state["tick"])
                if pending.progress:
                    indicator.setText("trialyst: %s (%s)" % (title, pending.progress))
            try:
                toolkit.reschedule()
            except Exception:
                pass

        try:
            return sidecar.call(method, params, between=between)
        finally:
            RUNNING["pending"] = None
            if indicator is not None:
                indicator.end()

    def selection_cells(self, document):
        """The selected cells: a single cell grows to its region; whole
        columns or rows shrink to the used area; error cells as their text."""
        selection = document.getCurrentSelection()
        if selection is None or not hasattr(selection, "getRangeAddress"):
            raise SidecarError("select the trial's cells (one range) first")
        address = selection.getRangeAddress()
        sheet = document.getSheets().getByIndex(address.Sheet)
        if address.StartColumn == address.EndColumn and address.StartRow == address.EndRow:
            cursor = sheet.createCursorByRange(selection)
            cursor.collapseToCurrentRegion()
            address = cursor.getRangeAddress()
        used = sheet.createCursor()
        used.gotoEndOfUsedArea(False)
        end = used.getRangeAddress()
        end_row = min(address.EndRow, end.EndRow)
        end_col = min(address.EndColumn, end.EndColumn)
        if end_row < address.StartRow or end_col < address.StartColumn:
            raise SidecarError("the selected cells are empty")
        block = sheet.getCellRangeByPosition(address.StartColumn, address.StartRow, end_col, end_row)
        rows = [list(row) for row in block.getDataArray()]
        # Error cells read as empty in the data array: send their text.
        errors = block.queryFormulaCells(4)  # com.sun.star.sheet.FormulaResult.ERROR
        for error_range in errors.getRangeAddresses():
            for row in range(error_range.StartRow, error_range.EndRow + 1):
                for col in range(error_range.StartColumn, error_range.EndColumn + 1):
                    text = sheet.getCellByPosition(col, row).getString()
                    rows[row - address.StartRow][col - address.StartColumn] = text
        origin = trialyst_client.column_letters(address.StartColumn) + str(address.StartRow + 1)
        return sheet, trialyst_client.read_selection_values(rows), origin

    def analysis_settings(self, document, arguments):
        settings = trialyst_sheets.choices(document)
        for name, key in (
            ("Confidence", "confidence"),
            ("Direction", "direction"),
            ("Control", "control"),
            ("Factor", "factor"),
            ("Response", "response"),
        ):
            if arguments.get(name) not in (None, ""):
                settings[key] = arguments[name]
        return {key: value for key, value in settings.items() if value not in (None, "")}

    def write_tables(self, document, tables, kind):
        controller = document.getCurrentController()
        active = controller.getActiveSheet()
        cache = {}
        names = [trialyst_sheets.write_table(document, controller, table, kind, cache) for table in tables]
        trialyst_sheets.draw_charts(document, tables, names)
        return names, active, cache

    # -- commands ------------------------------------------------------
    def analyse(self, arguments, findings_only=False):
        document = self.document()
        started = time.perf_counter()
        sheet, cells, origin = self.selection_cells(document)
        sidecar = self.sidecar(document)
        params = {
            "cells": cells,
            "origin": origin,
            "sheet": sheet.getName(),
            "sourceName": document.getTitle(),
            "settings": self.analysis_settings(document, arguments),
        }
        method = "trialyst/inspectCells" if findings_only else "trialyst/analyseCells"
        size = sum(len(row) for row in cells)
        read_done = time.perf_counter()
        answer = self.run_request(sidecar, method, params, "%s %d values" % ("inspecting" if findings_only else "analysing", size))
        findings = answer["findings"] if findings_only else answer["results"].get("findings", [])
        answered = time.perf_counter()
        kind = "inspect" if findings_only else "analyse"
        trialyst_sheets.PHASES.clear()
        # A rerun writes over the sheets and marks of the former run. The new
        # sheets do not go to the undo list; the user's own edits stay undoable.
        # Removing sheets while the undo list is locked stops the office, so
        # the former run's charts and unused sheets are removed outside it.
        document.getCurrentController().setActiveSheet(sheet)
        trialyst_sheets.clear_own_sheets(document, ("inspect", "analyse"))
        undo = document.getUndoManager()
        undo.lock()
        try:
            with trialyst_sheets.quiet_document(document):
                started_marks = time.perf_counter()
                trialyst_sheets.clear_all_marks(document)
                trialyst_sheets.timed("clear marks", started_marks)
                controller = document.getCurrentController()
                names = []
                cache = {}
                started_tables = time.perf_counter()
                if not findings_only:
                    names, _, cache = self.write_tables(document, answer["tables"], kind)
                trialyst_sheets.timed("tables", started_tables)
                started_marks = time.perf_counter()
                comments = trialyst_sheets.mark_findings(document, findings)
                if findings:
                    names.append(trialyst_sheets.write_problems_sheet(document, controller, findings, kind, cache))
                trialyst_sheets.timed("marks", started_marks)
                controller.setActiveSheet(document.getSheets().getByName(names[0]) if names else sheet)
        finally:
            undo.unlock()
        trialyst_sheets.remove_unused_sheets(document)
        started_status = time.perf_counter()
        self.status_text("trialyst: %d sheets written, %d data problems marked" % (len(names), comments))
        trialyst_sheets.timed("status", started_status)
        for problem in trialyst_sheets.CHART_PROBLEMS:
            self.log("chart not drawn: " + problem)
        charts_missed = len(trialyst_sheets.CHART_PROBLEMS)
        del trialyst_sheets.CHART_PROBLEMS[:]
        return {
            "sheets": names,
            "findings": len(findings),
            "comments": comments,
            "chartsNotDrawn": charts_missed,
            "readMs": round((read_done - started) * 1000.0, 1),
            "requestMs": round((answered - read_done) * 1000.0, 1),
            "writeMs": round((time.perf_counter() - answered) * 1000.0, 1),
            "writeParts": dict(trialyst_sheets.PHASES),
            "sidecarPid": sidecar.pid,
        }

    def inspect(self, arguments):
        return self.analyse(arguments, findings_only=True)

    def plan(self, arguments):
        document = self.document()
        if not arguments:
            arguments = self.ask(
                "Plan the next trial",
                [
                    ("Factors", "Factors, one a line: name: level, level", "Temperature: 160, 180\nPressure: 2, 3", True),
                    ("Responses", "Responses, separated by commas", "Yield", False),
                    ("Runs", "Runs of a fraction (empty for every combination)", "", False),
                    ("Replicates", "Copies of the whole plan", "1", False),
                    ("CentrePoints", "Centre runs", "0", False),
                ],
            )
            if arguments is None:
                return {"sheets": [], "declined": True}
        params = {
            "factors": trialyst_client.parse_factor_lines(arguments.get("Factors", "")),
            "responses": [text.strip() for text in str(arguments.get("Responses", "")).split(",") if text.strip()],
        }
        for name, key in (("Runs", "fractionRuns"), ("Replicates", "replicates"), ("CentrePoints", "centrePoints"), ("Blocks", "blocks"), ("Seed", "seed")):
            value = arguments.get(name)
            if value not in (None, ""):
                params[key] = int(float(value))
        sidecar = self.sidecar(document)
        answer = self.run_request(sidecar, "trialyst/planTrial", params, "planning")
        trialyst_sheets.remove_own_sheets(document, "plan")
        with trialyst_sheets.quiet_document(document):
            names, _, _ = self.write_tables(document, answer["tables"], "plan")
        document.getCurrentController().setActiveSheet(document.getSheets().getByName(names[0]))
        return {"sheets": names, "runs": answer["plan"]["runs"]}

    def size(self, arguments):
        document = self.document()
        if not arguments:
            arguments = self.ask(
                "Size the next trial",
                [
                    ("Conditions", "Conditions to compare", "3", False),
                    ("SmallestDifference", "Smallest difference worth finding", "1", False),
                    ("SD", "SD of a single run", "1", False),
                    ("Power", "Wanted power", "0.8", False),
                ],
            )
            if arguments is None:
                return {"sheets": [], "declined": True}
        params = {}
        for name, key, cast in (
            ("Conditions", "conditions", int),
            ("SmallestDifference", "smallestDifference", float),
            ("SD", "sd", float),
            ("Power", "power", float),
            ("Alpha", "alpha", float),
            ("Factors", "factors", int),
            ("Effect", "effect", float),
            ("CentrePoints", "centrePoints", int),
        ):
            value = arguments.get(name)
            if value not in (None, ""):
                params[key] = cast(float(value)) if cast is int else cast(value)
        sidecar = self.sidecar(document)
        answer = self.run_request(sidecar, "trialyst/sizeTrial", params, "sizing")
        trialyst_sheets.remove_own_sheets(document, "size")
        with trialyst_sheets.quiet_document(document):
            names, _, _ = self.write_tables(document, answer["tables"], "size")
        document.getCurrentController().setActiveSheet(document.getSheets().getByName(names[0]))
        return {"sheets": names, "needed": answer["answer"]["needed"]}

    def choices(self, arguments):
        document = self.document()
        current = trialyst_sheets.choices(document)
        if not arguments:
            arguments = self.ask(
                "Choices for the analysis",
                [
                    ("Confidence", "Confidence (such as 95%)", current.get("confidence", "95%"), False),
                    ("Direction", "Better is (higher, lower, target 12.5, or Response: lower, ...)", current.get("direction", ""), False),
                    ("Control", "Control condition (compare the others with it)", current.get("control", ""), False),
                    ("Factor", "Factor columns (empty: found from the table)", current.get("factor", ""), False),
                    ("Response", "Response columns (empty: every numeric column)", current.get("response", ""), False),
                ],
            )
            if arguments is None:
                return {"declined": True}
        chosen = {key.lower(): str(value) for key, value in arguments.items() if str(value).strip()}
        trialyst_sheets.set_user_property(document, trialyst_sheets.CHOICES_PROPERTY, json.dumps(chosen))
        return {"choices": chosen}

    def stop(self, arguments):
        RUNNING["stop"] = True
        pending, sidecar = RUNNING["pending"], RUNNING["sidecar"]
        if pending is not None and sidecar is not None:
            sidecar.cancel(pending)
            return {"stopped": pending.method}
        return {"stopped": None}

    def ask(self, title, fields):
        """A small dialog of labelled text boxes; None when cancelled."""
        smgr = self.ctx.ServiceManager
        model = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialogModel", self.ctx)
        height = 20
        layout = []
        for name, label, default, multiline in fields:
            box_height = 40 if multiline else 12
            layout.append((name, label, default, multiline, height, box_height))
            height += 12 + box_height + 6
        model.Width, model.Height, model.Title = 260, height + 24, title
        for name, label, default, multiline, top, box_height in layout:
            caption = model.createInstance("com.sun.star.awt.UnoControlFixedTextModel")
            caption.PositionX, caption.PositionY, caption.Width, caption.Height = 8, top, 244, 10
            caption.Label = label
            model.insertByName(name + "Label", caption)
            box = model.createInstance("com.sun.star.awt.UnoControlEditModel")
            box.PositionX, box.PositionY, box.Width, box.Height = 8, top + 11, 244, box_height
            box.Text = str(default)
            box.MultiLine = multiline
            model.insertByName(name, box)
        for name, label, kind, left in (("OK", "OK", 1, 150), ("Cancel", "Cancel", 2, 204)):
            button = model.createInstance("com.sun.star.awt.UnoControlButtonModel")
            button.PositionX, button.PositionY, button.Width, button.Height = left, height + 4, 48, 14
            button.Label, button.PushButtonType = label, kind
            model.insertByName(name, button)
        dialog = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialog", self.ctx)
        dialog.setModel(model)
        toolkit = smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx)
        dialog.createPeer(toolkit, None)
        try:
            if dialog.execute() != 1:
                return None
            return {name: dialog.getControl(name).getText() for name, *_ in fields}
        finally:
            dialog.dispose()


class OptionsPage(unohelper.Base, XContainerWindowEventHandler, XServiceInfo):
    """Tools > Options > trialyst: the path of the trialyst program."""

    def __init__(self, ctx, *args):
        self.ctx = ctx

    def getImplementationName(self):
        return OPTIONS_IMPLEMENTATION

    def supportsService(self, name):
        return name == OPTIONS_IMPLEMENTATION

    def getSupportedServiceNames(self):
        return (OPTIONS_IMPLEMENTATION,)

    def getSupportedMethodNames(self):
        return ("external_event",)

    def callHandlerMethod(self, window, event, method):
        if method != "external_event":
            return False
        box = window.getControl("ProgramPath")
        if event in ("initialize", "back"):
            box.setText(configured_program(self.ctx))
        elif event == "ok":
            set_configured_program(self.ctx, box.getText().strip())
        return True


g_ImplementationHelper = unohelper.ImplementationHelper()
g_ImplementationHelper.addImplementation(Commands, IMPLEMENTATION, ("com.sun.star.frame.ProtocolHandler",))
g_ImplementationHelper.addImplementation(OptionsPage, OPTIONS_IMPLEMENTATION, (OPTIONS_IMPLEMENTATION,))
