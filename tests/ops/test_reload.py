"""SIGHUP: a valid change is applied live, an invalid or model-changing one is refused and
the daemon goes on with its old configuration."""

import signal
import time

import ops_support
from ops_support import Station, wait_for

import unittest


class Reload(unittest.TestCase):
    def setUp(self):
        self.station = Station(self)
        self.station.write_samples(6)
        self.health = self.station.start().wait_files_done(6)

    def rewrite(self, old, new):
        text = self.station.config_text.replace(old, new)
        self.assertNotEqual(text, self.station.config_text, f"{old!r} is in the config")
        with open(self.station.config_path, "w", encoding="utf-8") as handle:
            handle.write(text)
        self.station.config_text = text

    def hang_up_and_wait(self, result):
        """Sends SIGHUP and waits for the reload counter of `result` to go up by one."""
        name = f'seston_config_reloads_total{{result="{result}"}}'
        before = ops_support.metric_value(self.station.metrics(), name)
        self.station.daemon.signal(signal.SIGHUP)
        wait_for(lambda: ops_support.metric_value(self.station.metrics(), name) == before + 1,
                 20, f"a reload counted as {result}")

    def test_a_valid_change_is_applied_live(self):
        self.rewrite("raise_after: 2", "raise_after: 4")
        self.rewrite("level: info", "level: debug")
        self.hang_up_and_wait("applied")
        log = wait_for(lambda: "reload applied" in self.station.log() and self.station.log(), 10,
                       "the reload to be logged")
        self.assertIn('alerts.raise_after (2 -> 4), logging.level ("info" -> "debug")', log)
        # Logging at the new level (each API request is a debug line), still serving, with
        # the same model.
        wait_for(lambda: " debug api: " in self.station.log(), 10, "a debug line")
        self.assertEqual(self.station.health()["k"], self.health["k"])
        self.assertEqual(self.station.health()["state"], "running")

    def test_an_invalid_file_is_refused_and_the_old_config_runs_on(self):
        self.rewrite("raise_after: 2", "raise_after: many")
        self.hang_up_and_wait("invalid")
        log = self.station.log()
        self.assertIn("reload refused, the running configuration is kept", log)
        self.assertIn("alerts.raise_after must be an integer from 1 to 1000000", log)
        self.station.write_samples(2, first_sample=7, start="2026-06-01T00:30:00Z")
        health = self.station.wait_files_done(8)
        self.assertEqual(health["state"], "running")
        self.assertGreater(health["particles"]["accepted"], self.health["particles"]["accepted"])

    def test_a_model_change_is_refused_naming_the_keys(self):
        self.rewrite("k: 4", "k: 6")
        self.hang_up_and_wait("refused")
        log = self.station.log()
        self.assertIn("model.k (4 -> 6) would invalidate the fitted model", log)
        self.assertEqual(self.station.health()["k"], 4)
        self.assertNotIn("reload applied", log)


if __name__ == "__main__":
    ops_support.main()
