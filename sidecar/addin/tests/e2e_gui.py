"""The add-in's checks that need the office's windows: run by e2e_office.py
on a second office started with a display (Xvfb), not headless.

- the Data menu's own entry clicked, through the office's accessibility
  tree (the menu bar, the Data menu, our submenu, the entry, each opened
  and pressed as a user would), and the result sheets appear;
- the options page's window made from its dialog file, with its event
  handler, the sidecar's path typed in and OK pressed: the setting is
  stored and the next sidecar is started from that path;
- the plan and size dialogs: the command dispatched without arguments, its
  dialog found among the office's top windows, its fields filled through
  their accessible text and OK pressed; the written plan and size checked.
"""

import json
import os
import re
import shutil
import subprocess
import threading
import time


# com.sun.star.accessibility.AccessibleRole
ROLE_DIALOG = 12
ROLE_LABEL = 30
ROLE_MENU = 34
ROLE_MENU_BAR = 35
ROLE_MENU_ITEM = 36
ROLE_PUSH_BUTTON = 44
ROLE_TEXT = 60


def children(context):
    out = []
    for index in range(context.getAccessibleChildCount()):
        child = context.getAccessibleChild(index)
        if child is not None and child.getAccessibleContext() is not None:
            out.append(child.getAccessibleContext())
    return out


def find_child(context, role, name, seconds=5.0):
    """The accessible child of `context` with this role and name; menus are
    filled when they open, so the search is retried for a while."""
    deadline = time.monotonic() + seconds
    while True:
        for child in children(context):
            if child.getAccessibleRole() == role and child.getAccessibleName().replace("~", "") == name:
                return child
        if time.monotonic() > deadline:
            return None
        time.sleep(0.1)


def click_menu_entry(document, path):
    """Opens the menus along `path` (menu names, then the entry's name) in
    the document window's menu bar and presses the entry. Returns what
    went wrong, or None."""
    window = document.getCurrentController().getFrame().getContainerWindow()
    root = window.getAccessibleContext()
    bar = None
    for child in children(root):
        if child.getAccessibleRole() == ROLE_MENU_BAR:
            bar = child
    if bar is None:
        return "the document window has no menu bar in its accessibility tree"
    current = bar
    for depth, name in enumerate(path):
        role = ROLE_MENU_ITEM if depth == len(path) - 1 else ROLE_MENU
        found = find_child(current, role, name)
        if found is None:
            shown = [child.getAccessibleName() for child in children(current)]
            return "no '%s' in the menu %s (it holds %s)" % (name, path[:depth] or "bar", shown)
        # Pressing a menu opens it (and fills it); pressing the entry runs it.
        found.doAccessibleAction(0)
        current = found
    return None


def top_dialog(office, title, seconds=20.0):
    """The accessible context of the office's open dialog with this title."""
    toolkit = office.smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", office.ctx)
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        for index in range(toolkit.getTopWindowCount()):
            window = toolkit.getTopWindow(index)
            context = window.getAccessibleContext() if window is not None else None
            if context is not None and context.getAccessibleRole() == ROLE_DIALOG and context.getAccessibleName() == title:
                return context
        time.sleep(0.1)
    return None


def describe(context, depth):
    """The accessibility tree under `context`, for a failure's message."""
    return [
        (child.getAccessibleRole(), child.getAccessibleName(), describe(child, depth - 1) if depth > 1 else None)
        for child in children(context)
    ]


def text_in(context, depth=5):
    """`context` when it is a text field, else the first text field inside
    it (a multi-line box keeps its text one level down)."""
    if context.getAccessibleRole() == ROLE_TEXT:
        return context
    if depth == 0:
        return None
    for child in children(context):
        found = text_in(child, depth - 1)
        if found is not None:
            return found
    return None


def type_into(field, typed, display, title):
    """Gives `field` the focus and types `typed` with xdotool (the keys go
    through the X server as a user's would); False without xdotool."""
    if not display or shutil.which("xdotool") is None:
        return False
    environment = dict(os.environ, DISPLAY=display)
    # Without a window manager the X focus stays where it was: the dialog's
    # window is given it, then the office gives the box its own focus.
    found = subprocess.run(
        ["xdotool", "search", "--name", "^%s$" % title], env=environment, capture_output=True, text=True, check=False
    ).stdout.split()
    if found:
        subprocess.run(["xdotool", "windowfocus", "--sync", found[-1]], env=environment, check=False)
    inner = children(field)
    (inner[0] if inner else field).grabFocus()
    time.sleep(0.3)
    subprocess.run(["xdotool", "key", "--clearmodifiers", "ctrl+a", "BackSpace"], env=environment, check=False)
    for number, line in enumerate(typed.split("\n")):
        if number:
            subprocess.run(["xdotool", "key", "Return"], env=environment, check=False)
        subprocess.run(["xdotool", "type", "--delay", "5", line], env=environment, check=False)
    time.sleep(0.3)
    return True


def fill_dialog(dialog, values, display=None):
    """Types `values` ({label start: text}) into the dialog's text fields,
    each found by its own accessible name or the label before it, and
    presses OK; a box without accessible text is typed into with xdotool.
    Returns the labels not found."""
    missing = dict(values)
    fields = children(dialog)
    label = ""
    for field in fields:
        role = field.getAccessibleRole()
        if role == ROLE_LABEL:
            label = field.getAccessibleName()
            continue
        if role == ROLE_PUSH_BUTTON:
            continue
        text = text_in(field)
        name = field.getAccessibleName() or label
        for start, typed in list(missing.items()):
            if not name.startswith(start):
                continue
            if text is not None:
                text.setText(typed)
                del missing[start]
            elif type_into(field, typed, display, dialog.getAccessibleName()):
                # A multi-line box offers no accessible text: it is typed into.
                del missing[start]
    if missing:
        print("dialog fields: %s" % describe(dialog, 2))
    for field in fields:
        if field.getAccessibleRole() == ROLE_PUSH_BUTTON and field.getAccessibleName() == "OK":
            field.doAccessibleAction(0)
            return list(missing)
    return list(missing) + ["OK button"]


def dispatch_with_dialog(office, document, command, title, values, display=None):
    """Dispatches `command` without arguments (so the add-in asks with its
    dialog), fills the dialog and presses OK; returns the command's result."""
    frame = document.getCurrentController().getFrame()
    outcome = {}

    def run():
        try:
            result = office.dispatch(frame, "org.trialyst.addin:" + command)
            result = getattr(result, "Result", result)
            outcome["answer"] = json.loads(result) if isinstance(result, str) and result else {"ok": False, "error": repr(result)}
        except Exception as error:  # the bridge's own failure, reported as the outcome
            outcome["answer"] = {"ok": False, "error": repr(error)}

    worker = threading.Thread(target=run, daemon=True)
    worker.start()
    dialog = top_dialog(office, title)
    if dialog is None:
        worker.join(5)
        return {"ok": False, "error": "no dialog titled '%s' appeared" % title}
    missing = fill_dialog(dialog, values, display)
    worker.join(120)
    answer = outcome.get("answer", {"ok": False, "error": "the command did not finish"})
    if missing:
        answer["missing fields"] = missing
    return answer


def options_page(office, document, program, check, props):
    """The options page: its window made from the extension's dialog file
    with the page's own handler, a path typed in, OK pressed."""
    provider = office.ctx.getValueByName("/singletons/com.sun.star.deployment.PackageInformationProvider")
    location = provider.getPackageLocation("org.trialyst.addin")
    handler = office.smgr.createInstanceWithContext("org.trialyst.addin.OptionsPage", office.ctx)
    windows = office.smgr.createInstanceWithContext("com.sun.star.awt.ContainerWindowProvider", office.ctx)
    frame = document.getCurrentController().getFrame()
    window = windows.createContainerWindow(location + "/dialogs/Program.xdl", "", frame.getContainerWindow(), handler)
    handler.callHandlerMethod(window, "initialize", "external_event")
    shown = window.getControl("ProgramPath").getText()
    window.getControl("ProgramPath").setText(program)
    handler.callHandlerMethod(window, "ok", "external_event")
    window.dispose()
    check(True, "the options page opened showing the stored path '%s'" % shown)
    configuration = office.smgr.createInstanceWithContext("com.sun.star.configuration.ConfigurationProvider", office.ctx)
    access = configuration.createInstanceWithArguments(
        "com.sun.star.configuration.ConfigurationAccess", props(nodepath="/org.trialyst.addin.Settings/Sidecar")
    )
    stored = access.getByName("ProgramPath")
    check(stored == program, "OK on the options page stores the sidecar's path: '%s'" % stored)


def run_gui_checks(office, arguments, work, check, helpers):
    """The checks above; `helpers` gives select, sheet_values and props."""
    select, sheet_values, props = helpers["select"], helpers["sheet_values"], helpers["props"]
    program = arguments.program

    # The options page: a copy of the program at its own path, set there.
    other = os.path.join(work, "other-place", "trialyst")
    os.makedirs(os.path.dirname(other), exist_ok=True)
    shutil.copy(program, other)
    document = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    options_page(office, document, other, check, props)

    # The menu entry, clicked; the sidecar comes from the options page's path.
    sheet = document.getSheets().getByIndex(0)
    table = (("Old", "New", "Trial"), (12.1, 12.6, 12.2), (12.0, 12.9, 12.4), (12.3, 12.8, 12.1), (11.9, 12.7, 12.3), (12.2, 12.5, 12.0))
    sheet.getCellRangeByPosition(0, 0, 2, 5).setDataArray(table)
    before = set(document.getSheets().getElementNames())
    select(document, sheet.getName(), "A1")
    problem = click_menu_entry(document, ["Data", "trialyst", "Analyse selected trial"])
    check(problem is None, "the Data menu's entry 'trialyst > Analyse selected trial' was found and pressed: %s" % (problem or "ok"))
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and set(document.getSheets().getElementNames()) == before:
        time.sleep(0.1)
    # Let the command finish writing (its sheets appear one by one).
    time.sleep(1.0)
    clicked = [name for name in document.getSheets().getElementNames() if name not in before]
    check(len(clicked) >= 3, "the menu click wrote the result sheets: %s" % clicked)
    dispatched_doc = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    dispatched_doc.getSheets().getByIndex(0).getCellRangeByPosition(0, 0, 2, 5).setDataArray(table)
    select(dispatched_doc, dispatched_doc.getSheets().getByIndex(0).getName(), "A1")
    dispatched = office.run(dispatched_doc, "analyse")
    # The provenance sheet names the document and the time, and the first
    # row of each sheet its title; the rest must be what the dispatched
    # command writes.
    # The Summary's source line gives the minute of analysis, which may differ.
    def comparable(doc, name):
        return [
            tuple(re.sub(r"analysed \d{4}-\d\d-\d\d \d\d:\d\d UTC", "analysed (time)", cell) if isinstance(cell, str) else cell for cell in row)
            for row in sheet_values(doc, name)[1:]
        ]

    differing = [
        name for name in clicked
        if name != "Provenance" and comparable(document, name) != comparable(dispatched_doc, name)
    ]
    for name in differing:
        rows = [(a, b) for a, b in zip(comparable(document, name), comparable(dispatched_doc, name)) if a != b]
        print("%s differs: %s" % (name, rows[:3]))
    check(
        dispatched.get("ok") and dispatched.get("sheets") == clicked and not differing,
        "the menu click's sheets hold what the dispatched command writes (differing: %s)" % differing,
    )
    pid = dispatched.get("sidecarPid")
    try:
        started_from = os.readlink("/proc/%d/exe" % pid)
    except (OSError, TypeError):
        started_from = None
    check(started_from == other, "the sidecar was started from the options page's path: %s" % started_from)
    dispatched_doc.close(True)

    # The plan dialog, filled and confirmed.
    answer = dispatch_with_dialog(
        office,
        document,
        "plan",
        "Plan the next trial",
        {"Factors": "Temperature: 150, 190\nPressure: 2, 3", "Responses": "Yield", "Runs": "", "Copies": "1", "Centre": "2"},
        arguments.display,
    )
    # 2 factors at 2 levels: 4 runs, and the 2 centre runs asked for (common practice).
    check(answer.get("ok") and answer.get("runs") == 6 and not answer.get("missing fields"), "plan dialog: 2^2 with 2 centre runs gives 6 runs: %s" % answer)
    if answer.get("ok"):
        plan = sheet_values(document, answer["sheets"][0])
        header = next((row for row in plan if "Temperature" in row and "Pressure" in row), None)
        check(header is not None and "Yield" in header, "the written plan has the factor and response columns: %s" % (header,))
        if header is not None:
            at = plan.index(header)
            temperature = [row[header.index("Temperature")] for row in plan[at + 1:] if row[header.index("Temperature")] != ""]
            check(
                len(temperature) == 6 and {150.0, 190.0, 170.0} == set(float(value) for value in temperature),
                "the plan's temperatures are the typed 150 and 190 with the centre 170: %s" % temperature,
            )

    # The size dialog, filled and confirmed; the answer as `trialyst size` gives it.
    answer = dispatch_with_dialog(
        office,
        document,
        "size",
        "Size the next trial",
        {"Conditions": "3", "Smallest": "1", "SD": "0.5", "Wanted power": "0.8"},
    )
    cli = subprocess.run(
        [program, "size", "--conditions", "3", "--difference", "1", "--sd", "0.5", "--power", "0.8", "--json"],
        capture_output=True, text=True, check=False,
    ).stdout
    try:
        cli_needed = json.loads(cli)["needed"]["count"]
    except (ValueError, KeyError):
        cli_needed = None
    check(
        answer.get("ok") and answer.get("needed", {}).get("count") == cli_needed and not answer.get("missing fields"),
        "size dialog: runs per condition %s, as trialyst size --json says %s" % (answer.get("needed"), cli_needed),
    )
    document.close(True)
