"""Headless Chromium loads the status page from a running sestond and draws it.

The outside reference is a real browser engine (Debian's `chromium`): the page's script
must run, read the API and render its SVG plots with data. The page marks the end of a
round of drawing with data-ready="yes" on <body> and data-points="N" on each plot, which
--dump-dom shows; a screenshot is kept under the build folder for a person to look at.
"""

import os
import re
import subprocess
import tempfile

import ops_support
from ops_support import BINARIES, Station, require_tool

import unittest

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                  "--no-first-run", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync",
                  "--virtual-time-budget=8000"]


class StatusPage(unittest.TestCase):
    def setUp(self):
        self.chromium = require_tool("chromium")

    def browse(self, url, *flags):
        profile = tempfile.mkdtemp(prefix="seston-chromium-")
        result = subprocess.run([self.chromium, *CHROMIUM_FLAGS, f"--user-data-dir={profile}",
                                 *flags, url], capture_output=True, timeout=90)
        subprocess.run(["rm", "-rf", profile], check=False)
        return result

    def test_plots_render_with_data_and_a_screenshot_is_kept(self):
        station = Station(self)
        station.write_samples(24, scenario="bloom", extra=("--change-at", "1", "--ramp", "0.5"))
        health = station.start().wait_files_done(24)
        url = f"http://127.0.0.1:{station.api_port}/"

        dom = self.browse(url, "--dump-dom").stdout.decode("utf-8", "replace")
        self.assertIn('data-ready="yes"', dom, dom[-2000:])
        points = dict(re.findall(r'id="plot-(\w+)"[^>]*data-points="(\d+)"', dom))
        # 24 five-minute samples span two hours: the 10-minute plot has 12 steps with
        # water, one point per group each; the 6-hour plot has its last step or two.
        self.assertEqual(set(points), {"hours", "days", "scatter"})
        self.assertGreaterEqual(int(points["hours"]), 12 * health["k"])
        self.assertGreaterEqual(int(points["days"]), health["k"])
        self.assertEqual(int(points["scatter"]), 3000, "the ring's newest particles")
        self.assertEqual(len(re.findall(r'class="centre"', dom)), health["k"])
        self.assertIn(health["station"].replace('"', "&quot;"), dom)

        os.makedirs(BINARIES["out_dir"], exist_ok=True)
        screenshot = os.path.join(BINARIES["out_dir"], "status_page.png")
        if os.path.exists(screenshot):
            os.remove(screenshot)
        shot = self.browse(url, f"--screenshot={screenshot}", "--window-size=1280,1100")
        self.assertTrue(os.path.exists(screenshot), shot.stderr.decode()[-2000:])
        with open(screenshot, "rb") as handle:
            self.assertEqual(handle.read(8), b"\x89PNG\r\n\x1a\n")
        self.assertGreater(os.path.getsize(screenshot), 20000, "a page with plots, not blank")


if __name__ == "__main__":
    ops_support.main()
