"""Unit tests of the add-in's client part (trialyst_client) against the real
`trialyst serve`, without the office.

    TRIALYST_PROGRAM=target/debug/trialyst python3 -m unittest sidecar/addin/tests/test_client.py

Check values: the one-way means are the arithmetic means of the values sent
(common practice, worked by hand beside each case); the runs of a 2^2 full
factorial with 2 centre runs are 4 + 2 (NIST/SEMATECH e-Handbook 5.3.3.3);
the size answer is compared with `trialyst size --json` for the same
question, so the client shows the service's answer unchanged.
"""

import json
import os
import subprocess
import sys
import unittest

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "extension", "pythonpath"))

import trialyst_client  # noqa: E402
from trialyst_client import Cancelled, Sidecar, SidecarError  # noqa: E402

PROGRAM = os.environ.get("TRIALYST_PROGRAM", "")


@unittest.skipUnless(PROGRAM and os.path.isfile(PROGRAM), "set TRIALYST_PROGRAM to the trialyst program")
class AgainstTheServer(unittest.TestCase):
    def setUp(self):
        self.sidecar = Sidecar(PROGRAM)
        self.sidecar.start()

    def tearDown(self):
        self.sidecar.close()

    def test_the_server_announces_the_add_in_requests(self):
        requests = self.sidecar.capabilities["experimental"]["trialyst"]["requests"]
        for method in ("trialyst/analyseCells", "trialyst/inspectCells", "trialyst/planTrial", "trialyst/sizeTrial"):
            self.assertIn(method, requests)

    def test_analyse_cells_gives_results_tables_and_findings_at_cells(self):
        cells = [["Old die", "New die"], [12.0, 13.0], [12.2, "#N/A"], [12.4, 13.4], [11.8, 12.6]]
        answer = self.sidecar.call(
            "trialyst/analyseCells",
            {"cells": cells, "origin": "B3", "sheet": "Die trial"},
            between=lambda pending: None,
        )
        conditions = answer["results"]["responses"][0]["one_way"]["conditions"]
        means = {condition["name"]: condition["mean"] for condition in conditions}
        # By hand: (12.0 + 12.2 + 12.4 + 11.8) / 4 = 12.1; (13.0 + 13.4 + 12.6) / 3 = 13.0.
        self.assertAlmostEqual(means["Old die"], 12.1, places=12)
        self.assertAlmostEqual(means["New die"], 13.0, places=12)
        finding = answer["results"]["findings"][0]
        # The error value sits at C5: column B + 1, row 3 + 2.
        self.assertEqual((finding["sheet"], finding["cell"], finding["found"]), ("Die trial", "C5", "#N/A"))
        names = [table["name"] for table in answer["tables"]]
        self.assertTrue(names)
        self.assertTrue(all("charts" in table for table in answer["tables"]))

    def test_inspect_cells_reports_findings_without_analysing(self):
        cells = [["A", "B"], [1.0, "n/a"], [2.0, 3.0], [1.5, 3.5]]
        answer = self.sidecar.call("trialyst/inspectCells", {"cells": cells, "sheet": "S"})
        self.assertNotIn("responses", answer)
        self.assertEqual([finding["cell"] for finding in answer["findings"]], ["B2"])

    def test_plan_trial_gives_the_runs_of_a_full_factorial_with_centre_runs(self):
        answer = self.sidecar.call(
            "trialyst/planTrial",
            {
                "factors": [{"name": "Temperature", "levels": [160, 180]}, {"name": "Time", "levels": ["8", "12"]}],
                "responses": ["Yield"],
                "centrePoints": 2,
                "seed": 3,
            },
        )
        self.assertEqual(answer["plan"]["runs"], 6)
        self.assertEqual(answer["tables"][0]["values"][0][:1] != [], True)

    def test_size_trial_answers_as_the_command_line_does(self):
        answer = self.sidecar.call("trialyst/sizeTrial", {"conditions": 3, "smallestDifference": 1.0, "sd": 0.5})
        line = subprocess.run(
            [PROGRAM, "size", "--conditions", "3", "--difference", "1", "--sd", "0.5", "--json"],
            capture_output=True, text=True, check=True,
        ).stdout
        self.assertEqual(answer["answer"]["needed"], json.loads(line)["needed"])

    def test_an_unusable_parameter_names_its_field(self):
        with self.assertRaises(SidecarError) as caught:
            self.sidecar.call("trialyst/planTrial", {"factors": [{"name": "T"}], "responses": ["Y"]})
        self.assertEqual(caught.exception.data.get("field"), "params.factors[0].levels")

    def test_cancel_ends_a_long_request_as_cancelled(self):
        header = ["Line %d" % index for index in range(40)]
        rows = [header] + [[float((row * 7919 + col * 104729) % 1000) for col in range(40)] for row in range(20000)]
        pending = self.sidecar.send("trialyst/analyseCells", {"cells": rows})
        self.sidecar.cancel(pending)
        with self.assertRaises(Cancelled):
            self.sidecar.wait(pending, timeout=60)
        # The session goes on after a cancel.
        self.assertTrue(self.sidecar.call("trialyst/inspectCells", {"cells": [["A"], [1.0], [2.0]]}))

    def test_the_child_ends_when_its_input_closes(self):
        process = self.sidecar.process
        process.stdin.close()
        self.assertIsNotNone(process.wait(10))
        self.sidecar.process = None


class WithoutTheServer(unittest.TestCase):
    def test_the_program_is_found_in_order_setting_variable_shipped_path(self):
        here = os.path.abspath(__file__)
        found = trialyst_client.find_program(here, None, {trialyst_client.PROGRAM_ENV: "/nowhere"}, search_path="")
        self.assertEqual(found, (here, "options page"))
        found = trialyst_client.find_program("", None, {trialyst_client.PROGRAM_ENV: here}, search_path="")
        self.assertEqual(found[1], "environment variable TRIALYST_PROGRAM")
        with self.assertRaises(SidecarError) as caught:
            trialyst_client.find_program("/no/such/file", None, {}, search_path="")
        self.assertIn("options page", caught.exception.message)

    def test_factor_lines_and_addresses(self):
        self.assertEqual(
            trialyst_client.parse_factor_lines("Temperature: 160, 180\n\nLine = A, B"),
            [{"name": "Temperature", "levels": ["160", "180"]}, {"name": "Line", "levels": ["A", "B"]}],
        )
        with self.assertRaises(ValueError):
            trialyst_client.parse_factor_lines("no separator here")
        self.assertEqual(trialyst_client.column_letters(27), "AB")
        self.assertEqual(trialyst_client.parse_a1("$AB$12"), (11, 27))

    def test_blank_cells_become_null(self):
        self.assertEqual(trialyst_client.read_selection_values([["", 1.0, "x"]]), [[None, 1.0, "x"]])


if __name__ == "__main__":
    unittest.main()
