"""The add-in's client of `trialyst serve`: the child process, the framing,
and requests whose answers arrive on a queue.

Standard library only, and no UNO here: this part is tested without the
office (see ../../tests/test_client.py).

Threads: one reader thread per child reads framed messages from the
child's stdout and puts them on a queue. It never touches the office: the
office's objects are only used from the thread that runs a command, which
takes answers off the queue with `poll`, between handing control back to
the office so that the window stays responsive.
"""

import itertools
import json
import os
import queue
import shutil
import subprocess
import sys
import threading
import time

#: Name of the program looked for on PATH.
PROGRAM_NAME = "trialyst.exe" if os.name == "nt" else "trialyst"
#: Environment variable naming the program, used when the options page has no path.
PROGRAM_ENV = "TRIALYST_PROGRAM"


class SidecarError(Exception):
    """The sidecar could not be started, or ended, or answered with an error."""

    def __init__(self, message, code=None, data=None):
        super().__init__(message)
        self.message = message
        self.code = code
        self.data = data or {}


class Cancelled(SidecarError):
    """The request was cancelled by the user."""


def find_program(setting_path="", shipped_folder=None, environment=None, search_path=None):
    """Where the sidecar program is: the options page's setting, then the
    environment variable, then a binary shipped in the extension, then PATH.

    Returns (path, where) or raises SidecarError naming every place looked at.
    """
    environment = os.environ if environment is None else environment
    looked = []
    if setting_path:
        if os.path.isfile(setting_path):
            return setting_path, "options page"
        looked.append("the options page's path '%s' (no such file)" % setting_path)
    from_env = environment.get(PROGRAM_ENV, "")
    if from_env:
        if os.path.isfile(from_env):
            return from_env, "environment variable " + PROGRAM_ENV
        looked.append("%s='%s' (no such file)" % (PROGRAM_ENV, from_env))
    if shipped_folder:
        shipped = os.path.join(shipped_folder, PROGRAM_NAME)
        if os.path.isfile(shipped):
            return shipped, "shipped with the extension"
        looked.append("the extension's own folder")
    on_path = shutil.which(PROGRAM_NAME, path=search_path)
    if on_path:
        return on_path, "PATH"
    looked.append("PATH")
    raise SidecarError(
        "cannot find the trialyst program; looked at " + ", ".join(looked)
        + ". Set its path under Tools > Options > trialyst, or set " + PROGRAM_ENV + "."
    )


def frame(message):
    """One message with its Content-Length header, as bytes."""
    body = json.dumps(message, separators=(",", ":"), allow_nan=False).encode("utf-8")
    return b"Content-Length: %d\r\n\r\n" % len(body) + body


def read_message(stream):
    """Reads one framed message; None at the end of the stream."""
    length = None
    while True:
        line = stream.readline()
        if not line:
            return None
        line = line.strip()
        if not line:
            if length is None:
                continue
            break
        name, _, value = line.partition(b":")
        if name.strip().lower() == b"content-length":
            length = int(value.strip())
    body = b""
    while len(body) < length:
        chunk = stream.read(length - len(body))
        if not chunk:
            return None
        body += chunk
    return json.loads(body.decode("utf-8"))


class Pending:
    """A request sent and not yet answered."""

    def __init__(self, request_id, method):
        self.id = request_id
        self.method = method
        self.started = time.monotonic()
        self.result = None
        self.error = None
        self.done = False
        self.progress = ""


class Sidecar:
    """One `trialyst serve` child and its session.

    `start` launches it and sends `initialize`; `send` sends a request and
    returns a Pending; `poll` takes what the reader thread queued and fills
    in the Pending answers (call it from the thread that uses the office);
    `close` ends the session and the child.

    The child ends by itself when its input closes, which is what happens
    when the office ends or is killed: the pipe's writing end belongs to the
    office process alone.
    """

    def __init__(self, program, log=None):
        self.program = program
        self.log = log or (lambda text: None)
        self.process = None
        self.messages = queue.Queue()
        self.pending = {}
        self.ids = itertools.count(1)
        self.tokens = itertools.count(1)
        self.write_lock = threading.Lock()
        self.reader = None
        self.capabilities = {}

    # -- process -------------------------------------------------------
    def start(self, timeout=20.0):
        """Starts the child and initialises the session."""
        flags = {}
        if os.name == "nt":
            flags["creationflags"] = getattr(subprocess, "CREATE_NO_WINDOW", 0)
        else:
            # Its own session: signals meant for the office's process group
            # do not reach it; it ends when its input closes.
            flags["start_new_session"] = True
        try:
            self.process = subprocess.Popen(
                [self.program, "serve"],
                stdin=subprocess.PIPE,
                stdout=subprocess.PIPE,
                stderr=subprocess.DEVNULL,
                close_fds=True,
                **flags
            )
        except OSError as error:
            raise SidecarError("cannot start '%s': %s" % (self.program, error))
        self.reader = threading.Thread(target=self._read_loop, name="trialyst-reader", daemon=True)
        self.reader.start()
        pending = self.send(
            "initialize",
            {"processId": os.getpid(), "capabilities": {"window": {"workDoneProgress": True}}},
        )
        answer = self.wait(pending, timeout)
        self.capabilities = answer.get("capabilities", {})
        self._write({"jsonrpc": "2.0", "method": "initialized", "params": {}})
        return answer

    def is_running(self):
        return self.process is not None and self.process.poll() is None

    @property
    def pid(self):
        return self.process.pid if self.process else None

    def close(self, timeout=3.0):
        """Ends the session: shutdown, exit, then the child is waited for
        (and killed if it does not end in time)."""
        if self.process is None:
            return
        try:
            if self.is_running():
                pending = self.send("shutdown", None)
                self.wait(pending, timeout)
                self._write({"jsonrpc": "2.0", "method": "exit"})
        except SidecarError:
            pass
        try:
            self.process.stdin.close()
        except OSError:
            pass
        try:
            self.process.wait(timeout)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait(timeout)
        self.process = None

    # -- messages ------------------------------------------------------
    def _read_loop(self):
        # Only reads bytes and queues them: never calls the office.
        stream = self.process.stdout
        while True:
            try:
                message = read_message(stream)
            except (OSError, ValueError) as error:
                self.messages.put({"_ended": "the sidecar's output could not be read: %s" % error})
                return
            if message is None:
                self.messages.put({"_ended": "the sidecar ended"})
                return
            self.messages.put(message)

    def _write(self, message):
        data = frame(message)
        with self.write_lock:
            try:
                self.process.stdin.write(data)
                self.process.stdin.flush()
            except (OSError, ValueError, AttributeError) as error:
                raise SidecarError("the sidecar is not running (%s)" % error)

    def send(self, method, params, with_progress=False):
        """Sends a request; returns its Pending."""
        request_id = next(self.ids)
        if with_progress and isinstance(params, dict):
            params = dict(params, workDoneToken="trialyst-addin-%d" % next(self.tokens))
        pending = Pending(request_id, method)
        pending.token = params.get("workDoneToken") if isinstance(params, dict) else None
        self.pending[request_id] = pending
        message = {"jsonrpc": "2.0", "id": request_id, "method": method}
        if params is not None:
            message["params"] = params
        self._write(message)
        return pending

    def cancel(self, pending):
        """Asks the sidecar to stop a request."""
        if not pending.done:
            self._write({"jsonrpc": "2.0", "method": "$/cancelRequest", "params": {"id": pending.id}})

    def poll(self, wait=0.0):
        """Handles what has arrived; waits up to `wait` seconds for the first message."""
        handled = 0
        timeout = wait
        while True:
            try:
                message = self.messages.get(timeout=timeout) if timeout > 0 else self.messages.get_nowait()
            except queue.Empty:
                return handled
            timeout = 0
            handled += 1
            self._handle(message)

    def _handle(self, message):
        if "_ended" in message:
            for pending in self.pending.values():
                if not pending.done:
                    pending.done = True
                    pending.error = SidecarError(message["_ended"])
            self.pending.clear()
            return
        if "id" in message and "method" in message:
            # A request from the server (progress token creation): accept it.
            self._write({"jsonrpc": "2.0", "id": message["id"], "result": None})
            return
        if "method" in message:
            if message["method"] == "$/progress":
                params = message.get("params", {})
                value = params.get("value", {})
                for pending in self.pending.values():
                    if getattr(pending, "token", None) == params.get("token"):
                        pending.progress = value.get("message") or value.get("title") or ""
            return
        pending = self.pending.pop(message.get("id"), None)
        if pending is None:
            return
        pending.done = True
        if "error" in message:
            error = message["error"]
            kind = Cancelled if error.get("code") == -32800 else SidecarError
            pending.error = kind(error.get("message", "failed"), error.get("code"), error.get("data"))
        else:
            pending.result = message.get("result")

    def wait(self, pending, timeout=None, between=None, step=0.02):
        """Waits for an answer, calling `between()` between short waits (the
        office's event loop, progress, a cancel check). Returns the result or
        raises its error."""
        deadline = None if timeout is None else time.monotonic() + timeout
        while not pending.done:
            if between is not None:
                between(pending)
            self.poll(step)
            if deadline is not None and time.monotonic() > deadline and not pending.done:
                raise SidecarError("the sidecar did not answer %s within %.0f s" % (pending.method, timeout))
        if pending.error is not None:
            raise pending.error
        return pending.result

    def call(self, method, params, timeout=None, between=None):
        """Sends a request and waits for its answer."""
        return self.wait(self.send(method, params, with_progress=between is not None), timeout, between)


def read_selection_values(rows):
    """Cell values as the office's data arrays give them, into the protocol's
    cells: numbers stay numbers, empty text is a blank, text is text."""
    # `value != value` holds for NaN only; one comprehension, as this runs
    # over every selected cell.
    return [[None if value == "" or value != value else value for value in row] for row in rows]


def column_letters(index):
    """0 -> A, 25 -> Z, 26 -> AA."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def parse_a1(text):
    """'B3' -> (row 2, column 1)."""
    text = text.replace("$", "").strip().upper()
    column = 0
    position = 0
    while position < len(text) and text[position].isalpha():
        column = column * 26 + (ord(text[position]) - 64)
        position += 1
    if position == 0 or position == len(text):
        raise ValueError("not an A1 address: " + text)
    return int(text[position:]) - 1, column - 1


def parse_factor_lines(text):
    """The plan dialog's factor box: one factor a line, `Name: level, level`
    (or `Name = level, level`), into the protocol's factor objects."""
    factors = []
    for number, line in enumerate(text.splitlines(), 1):
        line = line.strip()
        if not line:
            continue
        for separator in (":", "="):
            if separator in line:
                name, _, levels = line.partition(separator)
                break
        else:
            raise ValueError("line %d: write the factor's name, ':' and its levels separated by commas" % number)
        levels = [level.strip() for level in levels.split(",") if level.strip()]
        factors.append({"name": name.strip(), "levels": levels})
    return factors


def log_to_file(path):
    """A log function appending timestamped lines to a file."""

    def log(text):
        try:
            with open(path, "a", encoding="utf-8") as handle:
                handle.write("%s %s\n" % (time.strftime("%Y-%m-%dT%H:%M:%S"), text))
        except OSError:
            pass

    return log


if __name__ == "__main__":
    # A quick check by hand: python3 trialyst_client.py /path/to/trialyst
    sidecar = Sidecar(sys.argv[1] if len(sys.argv) > 1 else find_program()[0])
    print(json.dumps(sidecar.start()["serverInfo"]))
    sidecar.close()
