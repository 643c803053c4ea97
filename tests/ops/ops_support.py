"""Shared helpers of the operations tests: the real sestond beside real monitoring tools.

Each test starts `sestond run` in its own scratch directory on free loopback ports, with
sample files from seston-sim, and the outside tool it checks against (Prometheus,
Alertmanager, Chromium) also on loopback. Binary paths of our own come from the command
line (CTest passes the built targets); the outside tools are looked up on PATH, and a
test is skipped (counted by unittest) only when its tool is not installed:

    python3 test_x.py --sestond PATH --sim PATH --out-dir DIR [unittest options]

Standard library only. Everything runs bounded in time and is killed when a test ends.
"""

import argparse
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import unittest

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "support"))
import harness  # noqa: E402
from harness import free_port, http_request  # noqa: E402,F401  (re-exported to the tests)

BINARIES = {}

CONFIG_TEMPLATE = """\
station: "Skerry Sound mooring B (operations test)"
input:
  drop_dir: ./drop
  settle_seconds: 0.2
  rescan_seconds: 1
{features}model:
  k: 4
  warmup_particles: 3000
  half_life_particles: 50000
counts:
  output_dir: ./counts
drift:
  evaluate_every_particles: {evaluate_every}
  composition: {{ window_particles: 3000 }}
alerts:
  dir: ./alerts
  raise_after: 2
  resolve_after: 2
  cooldown_seconds: 0
{alertmanager}state:
  dir: ./state
  checkpoint_seconds: 2
api:
  listen: "127.0.0.1:{api_port}"
  token_file: ./token
logging:
  level: info
"""

TOKEN = "ops-test-token-0123456789abcdef"


def parse_arguments():
    """Takes --sestond/--sim/--out-dir off sys.argv, leaving the rest to unittest."""
    parser = argparse.ArgumentParser(add_help=False)
    parser.add_argument("--sestond", required=True)
    parser.add_argument("--sim", required=True)
    parser.add_argument("--out-dir", required=True)
    known, rest = parser.parse_known_args()
    BINARIES.update(sestond=known.sestond, sim=known.sim, out_dir=known.out_dir)
    sys.argv = [sys.argv[0]] + rest


def main():
    parse_arguments()
    unittest.main(verbosity=2)


def require_tool(name):
    """The path of an outside tool, or a unittest skip when it is not installed."""
    path = shutil.which(name)
    if path is None:
        raise unittest.SkipTest(f"{name} is not installed (tools/install-deps.sh --test)")
    return path


def get_json(port, path):
    status, body = http_request(port, "GET", path)
    if status != 200:
        raise AssertionError(f"GET {path} answered {status}: {body}")
    return json.loads(body)


def wait_for(condition, seconds, what, interval=0.2):
    """harness.wait_for, with the errors of a daemon or tool not up yet counted as "not yet"."""
    return harness.wait_for(condition, seconds, what, interval,
                            tolerate=(OSError, ValueError, KeyError, AssertionError))


class Process:
    """A child process with its output in a log file; killed (group) when stopped."""

    def __init__(self, arguments, log_path, cwd=None):
        self.log_path = log_path
        self._log = open(log_path, "wb")
        self.process = subprocess.Popen(arguments, stdout=self._log, stderr=subprocess.STDOUT,
                                        cwd=cwd, start_new_session=True)

    def log(self):
        with open(self.log_path, "r", encoding="utf-8", errors="replace") as handle:
            return handle.read()

    def signal(self, number):
        self.process.send_signal(number)

    def stop(self, timeout=20):
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(timeout)
            except subprocess.TimeoutExpired:
                os.killpg(self.process.pid, signal.SIGKILL)
                self.process.wait(5)
        self._log.close()
        return self.process.returncode


class Station:
    """A scratch directory with a config, sample files and a running sestond."""

    def __init__(self, test, evaluate_every=1000, alertmanager_url=""):
        self.directory = tempfile.mkdtemp(prefix="seston-ops-")
        test.addCleanup(shutil.rmtree, self.directory, True)
        self.api_port = free_port()
        self.config_path = os.path.join(self.directory, "seston.yaml")
        alertmanager = ""
        if alertmanager_url:
            alertmanager = (f"  alertmanager:\n    url: \"{alertmanager_url}\"\n"
                            "    resend_seconds: 2\n    timeout_seconds: 2\n"
                            "    max_retry_seconds: 2\n")
        self.config_text = CONFIG_TEMPLATE.format(api_port=self.api_port,
                                                  evaluate_every=evaluate_every,
                                                  alertmanager=alertmanager,
                                                  features=harness.FEATURES_YAML)
        with open(self.config_path, "w", encoding="utf-8") as handle:
            handle.write(self.config_text)
        with open(os.path.join(self.directory, "token"), "w", encoding="utf-8") as handle:
            handle.write(TOKEN + "\n")
        os.makedirs(os.path.join(self.directory, "drop"))
        self.daemon = None
        self.test = test

    def write_samples(self, samples, first_sample=1, start="2026-06-01T00:00:00Z",
                      scenario="steady", extra=()):
        """Writes seston-sim files to a side directory, then renames them into drop/."""
        staging = tempfile.mkdtemp(prefix="sim-", dir=self.directory)
        subprocess.run([BINARIES["sim"], "--out", staging, "--samples", str(samples),
                        "--first-sample", str(first_sample), "--start", start,
                        "--scenario", scenario, *extra],
                       check=True, capture_output=True, timeout=60)
        names = sorted(os.listdir(staging))
        for name in names:
            os.rename(os.path.join(staging, name), os.path.join(self.directory, "drop", name))
        os.rmdir(staging)
        return names

    def start(self):
        self.daemon = Process([BINARIES["sestond"], "run", "--config", self.config_path],
                              os.path.join(self.directory, "sestond.log"))
        self.test.addCleanup(self.stop)
        wait_for(lambda: self.health(), 20, "sestond to answer /v1/health")
        return self

    def stop(self):
        if self.daemon is not None:
            self.daemon.stop()

    def health(self):
        return get_json(self.api_port, "/v1/health")

    def wait_files_done(self, files, seconds=60):
        """Waits until `files` files are done and nothing waits; returns the health."""
        def done():
            health = self.health()
            finished = health["files"]["done"] >= files and health["backlog"]["files"] == 0
            return health if finished else None
        return wait_for(done, seconds, f"{files} files done")

    def metrics(self):
        status, body = http_request(self.api_port, "GET", "/metrics")
        if status != 200:
            raise AssertionError(f"/metrics answered {status}")
        return body

    def log(self):
        return self.daemon.log()


def metric_value(text, name_with_labels):
    """The value of one sample line of a Prometheus text page, or None."""
    for line in text.splitlines():
        if line.startswith(name_with_labels + " "):
            return float(line.split(" ")[-1])
    return None
