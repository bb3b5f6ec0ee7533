#!/usr/bin/python3
"""Timings of the add-in in LibreOffice Calc, headless: from the dispatch of
the analyse command to the result sheets written, warm, for a 3 x 5 table
and for 20 x 5,000 values (targets: 150 ms and 400 ms at p50).

Run by run-e2e.sh --bench RUNS (which installs the extension into a
throwaway profile first); needs the system Python with the uno module.

    bench_office.py --profile DIR --program TRIALYST --runs N

Prints, for each size, the p50 of N warm runs of the time the add-in
measures itself (dispatch to sheets written), of the time seen by this
client (with the bridge's round trip), and of each part of the work
(reading the selection, the request, writing and its parts).
"""

import argparse
import json
import os
import statistics
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from e2e_office import Office, props, select, set_program_setting  # noqa: E402


def small_table():
    return (
        ("Old", "New", "Trial"),
        (12.1, 12.6, 12.2),
        (12.0, 12.9, 12.4),
        (12.3, 12.8, 12.1),
        (11.9, 12.7, 12.3),
        (12.2, 12.5, 12.0),
    )


def large_table():
    header = tuple("Line %d" % (index + 1) for index in range(20))
    return (header,) + tuple(
        tuple(10.0 + ((row * 7919 + col * 104729) % 1000) / 1000.0 + 0.05 * col for col in range(20))
        for row in range(5000)
    )


def p50(values):
    return round(statistics.median(values), 1) if values else None


def time_size(office, name, rows, selection, runs):
    document = office.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, props(Hidden=False))
    sheet = document.getSheets().getByIndex(0)
    sheet.getCellRangeByPosition(0, 0, len(rows[0]) - 1, len(rows) - 1).setDataArray(rows)
    answers = []
    for _ in range(runs + 1):
        select(document, sheet.getName(), selection)
        answer = office.run(document, "analyse")
        if not answer.get("ok"):
            raise SystemExit("%s: analyse failed: %s" % (name, answer.get("error")))
        answers.append(answer)
    document.close(True)
    warm = answers[1:]
    parts = {}
    for answer in warm:
        for key in ("readMs", "requestMs", "writeMs"):
            parts.setdefault(key, []).append(answer.get(key, 0.0))
        for key, value in (answer.get("writeParts") or {}).items():
            parts.setdefault("write: " + key, []).append(value)
    return {
        "size": name,
        "first run ms": answers[0].get("ms"),
        "warm runs": len(warm),
        "p50 ms (dispatch to sheets written, in the add-in)": p50([answer["ms"] for answer in warm]),
        "p50 ms (seen by the caller)": p50([answer["wall_ms"] for answer in warm]),
        "min ms": min(answer["ms"] for answer in warm),
        "max ms": max(answer["ms"] for answer in warm),
        "p50 parts ms": {key: p50(values) for key, values in parts.items()},
        "sheets": warm[-1].get("sheets"),
    }


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--profile", required=True)
    parser.add_argument("--program", required=True)
    parser.add_argument("--runs", type=int, default=9)
    arguments = parser.parse_args()
    environment = dict(os.environ, TRIALYST_PROGRAM="")
    office = Office(arguments.profile, "trialyst-bench-%d" % os.getpid())
    office.start(environment)
    try:
        set_program_setting(office, arguments.program)
        for name, rows, selection in (
            ("3 x 5", small_table(), "A1"),
            ("20 x 5,000", large_table(), "A1:T5001"),
        ):
            print(json.dumps(time_size(office, name, rows, selection, arguments.runs), indent=1), flush=True)
    finally:
        try:
            office.desktop.terminate()
        except Exception:
            pass
        try:
            office.process.wait(20)
        except Exception:
            office.kill()
    return 0


if __name__ == "__main__":
    sys.exit(main())
