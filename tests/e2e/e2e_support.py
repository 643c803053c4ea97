"""Shared helpers of the end-to-end tests: they drive the real binaries.

Each test gets its own scratch directory and free loopback ports, starts `sestond run`
with a config written there, talks to it over HTTP and TCP, and always kills the daemon
when it ends. Binary paths come from the command line (CTest passes the built targets):

    python3 test_x.py --sestond PATH --sim PATH --ctl PATH [unittest options]

Standard library only.
"""

import argparse
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import unittest

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "support"))
from harness import FEATURES_YAML, free_port, http_request, wait_for  # noqa: E402,F401

BINARIES = {}

# The shared feature block (harness.FEATURES_YAML); small warm-up so the tests reach the
# fitted model quickly.
CONFIG_TEMPLATE = """\
station: "Skerry Sound mooring B (end-to-end test)"
input:
  drop_dir: ./drop
  settle_seconds: {settle}
  rescan_seconds: 1
  max_line_bytes: {max_line_bytes}
  socket:
    listen: "{socket_listen}"
    max_connections: {max_connections}
    reply_linger_seconds: 0.5
{features}standardize: true
model:
  k: 4
  warmup_particles: {warmup}
  half_life_particles: 50000
counts:
  bin_seconds: 60
  output_dir: ./counts
  retained_bins: {retained_bins}
  retained_samples: {retained_samples}
alerts:
  dir: ./alerts
state:
  dir: ./state
  checkpoint_seconds: 5
api:
  listen: "127.0.0.1:{api_port}"
  token_file: ./token
logging:
  level: {log_level}
"""

TOKEN = "e2e-test-token-0123456789abcdef"


def parse_binaries():
    """Takes --sestond/--sim/--ctl off sys.argv, leaving the rest to unittest."""
    parser = argparse.ArgumentParser(add_help=False)
    parser.add_argument("--sestond", required=True)
    parser.add_argument("--sim", required=True)
    parser.add_argument("--ctl", required=True)
    known, rest = parser.parse_known_args()
    BINARIES.update(sestond=known.sestond, sim=known.sim, ctl=known.ctl)
    sys.argv = [sys.argv[0]] + rest


def main():
    parse_binaries()
    unittest.main(verbosity=2)


class Daemon:
    """One `sestond run` in `directory`, with its config and log there."""

    def __init__(self, directory, socket_port=None, settle=0.5, warmup=500, max_connections=16,
                 max_line_bytes=65536, log_level="info", retained_bins=20160,
                 retained_samples=2000):
        self.directory = directory
        self.api_port = free_port()
        self.socket_port = socket_port
        listen = f"127.0.0.1:{socket_port}" if socket_port else ""
        with open(os.path.join(directory, "token"), "w") as token:
            token.write(TOKEN + "\n")
        self.config = os.path.join(directory, "seston.yaml")
        with open(self.config, "w") as config:
            config.write(CONFIG_TEMPLATE.format(settle=settle, socket_listen=listen,
                                                max_connections=max_connections,
                                                max_line_bytes=max_line_bytes, warmup=warmup,
                                                api_port=self.api_port, log_level=log_level,
                                                retained_bins=retained_bins,
                                                retained_samples=retained_samples,
                                                features=FEATURES_YAML))
        self.drop = os.path.join(directory, "drop")
        self.process = None
        self.log_path = os.path.join(directory, "sestond.log")

    def start(self):
        # A restart may find the old port in TIME_WAIT; the server sets SO_REUSEADDR.
        self.log = open(self.log_path, "a")
        self.process = subprocess.Popen([BINARIES["sestond"], "run", "--config", self.config],
                                        stdout=self.log, stderr=subprocess.STDOUT)
        wait_for(self._answers, 20, "the daemon's API")
        return self

    def _answers(self):
        if self.process.poll() is not None:
            raise AssertionError(f"sestond exited with {self.process.returncode}:\n{self.log_text()}")
        try:
            return self.get("/v1/health")[0] == 200
        except OSError:
            return False

    def log_text(self):
        with open(self.log_path) as log:
            return log.read()[-4000:]

    def kill(self):
        """SIGKILL, as a power cut would."""
        if self.process and self.process.poll() is None:
            self.process.kill()
            self.process.wait(10)
        if self.process:
            self.log.close()

    def stop(self, timeout=20):
        """SIGTERM and wait; returns the exit code."""
        self.process.send_signal(signal.SIGTERM)
        code = self.process.wait(timeout)
        self.log.close()
        return code

    def request(self, method, path, body=None, token=None, timeout=10):
        headers = {}
        if token:
            headers["Authorization"] = f"Bearer {token}"
        if body is not None:
            headers["Content-Type"] = "application/json"
        status, text = http_request(self.api_port, method, path, body, headers, timeout)
        try:
            return status, json.loads(text)
        except ValueError:
            return status, text

    def get(self, path):
        return self.request("GET", path)

    def health(self):
        return self.get("/v1/health")[1]


class DaemonTestCase(unittest.TestCase):
    """Gives each test a scratch directory and kills every daemon it started."""

    def setUp(self):
        self.scratch = tempfile.mkdtemp(prefix="seston-e2e-")
        self.daemons = []

    def tearDown(self):
        for daemon in self.daemons:
            daemon.kill()
        if self._outcome_failed():
            for daemon in self.daemons:
                sys.stderr.write(f"--- {daemon.log_path} (tail)\n{daemon.log_text()}\n")
            sys.stderr.write(f"scratch kept: {self.scratch}\n")
        else:
            shutil.rmtree(self.scratch, ignore_errors=True)

    def _outcome_failed(self):
        outcome = getattr(self, "_outcome", None)
        result = getattr(outcome, "result", None)
        if result is None:
            return False
        return any(test is self for test, _ in result.failures + result.errors)

    def daemon(self, **options):
        daemon = Daemon(self.scratch, **options)
        self.daemons.append(daemon)
        return daemon

    def simulate(self, out, samples, seed=1, scale=0.5, first_sample=1, start=None):
        """Sample files from seston-sim's batch mode; returns their names in name order."""
        command = [BINARIES["sim"], "--out", out, "--samples", str(samples), "--seed", str(seed),
                   "--concentration-scale", str(scale), "--first-sample", str(first_sample)]
        if start:
            command += ["--start", start]
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        return sorted(name for name in os.listdir(out) if name.endswith(".csv"))

    def replay_summary(self, files, tag="replay"):
        """`sestond replay --summary` over `files` in the given order, in its own dirs."""
        directory = os.path.join(self.scratch, tag)
        os.makedirs(directory, exist_ok=True)
        with open(self.daemons[0].config) as live:
            text = live.read()
        for key in ("./counts", "./alerts", "./state", "./drop"):
            text = text.replace(key, f"./{tag}-{key[2:]}")
        config = os.path.join(directory, "replay.yaml")
        with open(config, "w") as out:
            out.write(text)
        summary = os.path.join(directory, "summary.json")
        subprocess.run([BINARIES["sestond"], "replay", "--config", config, "--summary", summary,
                        "--quiet"] + list(files), check=True, stdout=subprocess.DEVNULL,
                       stderr=subprocess.PIPE)
        with open(summary) as result:
            return json.load(result)


def data_rows(path):
    with open(path, "rb") as sample:
        return max(0, sum(1 for line in sample if line.strip()) - 1)


def cluster_counts_from_summary(summary):
    return {cluster["id"]: cluster["count"] for cluster in summary["clusters"]}


def cluster_counts_from_api(daemon):
    status, body = daemon.get("/v1/clusters")
    assert status == 200, body
    return {cluster["id"]: cluster["count"] for cluster in body["clusters"]}


def counts_over_everything(daemon):
    """Counts over a window covering every bin (the simulated days are in 2026)."""
    return daemon.get("/v1/counts?from=2026-01-01T00:00:00Z&to=2027-01-01T00:00:00Z")


class SocketClient:
    """One NDJSON connection; replies are read by whoever calls read_replies."""

    def __init__(self, port, timeout=30):
        self.sock = socket.create_connection(("127.0.0.1", port), timeout=timeout)
        self.buffer = b""

    def send_lines(self, lines):
        self.sock.sendall("".join(line + "\n" for line in lines).encode())

    def read_reply(self):
        while b"\n" not in self.buffer:
            chunk = self.sock.recv(65536)
            if not chunk:
                return None
            self.buffer += chunk
        line, self.buffer = self.buffer.split(b"\n", 1)
        return json.loads(line)

    def read_until(self, predicate, timeout=30):
        self.sock.settimeout(timeout)
        replies = []
        while True:
            reply = self.read_reply()
            if reply is None:
                return replies
            replies.append(reply)
            if predicate(replies):
                return replies

    def close(self):
        self.sock.close()


def particle_line(time_seconds, sample, index):
    """One invented particle, in one of three size groups, always inside every domain."""
    group = index % 3
    area = (40.0, 300.0, 2500.0)[group] * (1 + 0.05 * ((index * 7919) % 13) / 13)
    perimeter = (25.0, 70.0, 210.0)[group] * (1 + 0.04 * ((index * 104729) % 11) / 11)
    aspect = (0.9, 0.6, 0.3)[group] + 0.01 * (index % 5)
    grey = (120.0, 90.0, 60.0)[group] + (index % 7)
    return (f'{{"time":{time_seconds:.3f},"sample":"{sample}","area_um2":{area:.4f},'
            f'"aspect_ratio":{aspect:.4f},"perimeter_um":{perimeter:.4f},"grey_level":{grey:.2f}}}')


def close_line(sample, volume_ml=5.0):
    return json.dumps({"close_sample": sample, "volume_ml": volume_ml})


def vm_hwm_kib(pid):
    """Peak resident set size of process `pid` (VmHWM in /proc/PID/status), KiB."""
    with open(f"/proc/{pid}/status") as status:
        for line in status:
            if line.startswith("VmHWM:"):
                return int(line.split()[1])
    raise AssertionError("no VmHWM in /proc status")


def stream_samples(daemon, total, particles_per_sample=400):
    """Streams `total` particles over one connection in samples of `particles_per_sample`
    (each closed), reading the commits on a second thread. Returns (commits, peaks): the
    number of commits and [VmHWM after the first half is counted, VmHWM at the end], KiB.
    The lines of one sample differ only in time and sample id, so they are built from
    templates: Python then keeps up with the daemon."""
    import threading

    client = SocketClient(daemon.socket_port, timeout=120)
    samples = total // particles_per_sample
    replies = []
    reader = threading.Thread(
        target=lambda: replies.extend(client.read_until(lambda r: len(r) >= samples, 600)))
    reader.start()
    template = [particle_line(0, "SAMPLE", i) for i in range(particles_per_sample)]
    tails = [line[line.index(',"sample"'):] for line in template]
    peaks = []
    for s in range(samples):
        base = 1780000000 + s * particles_per_sample * 0.05
        sample = f"M{s:07d}"
        lines = [f'{{"time":{base + 0.05 * i:.3f}' + tails[i].replace("SAMPLE", sample)
                 for i in range(particles_per_sample)]
        lines.append(close_line(sample))
        client.send_lines(lines)
        if s + 1 == samples // 2:
            half = (samples // 2) * particles_per_sample
            wait_for(lambda: daemon.health()["particles"]["accepted"] >= half, 300,
                     "the first half to be counted", interval=0.2)
            peaks.append(vm_hwm_kib(daemon.process.pid))
    reader.join(600)
    wait_for(lambda: daemon.health()["particles"]["accepted"] == samples * particles_per_sample,
             120, "every particle to be counted")
    peaks.append(vm_hwm_kib(daemon.process.pid))
    client.close()
    return len([r for r in replies if "committed" in r]), peaks
