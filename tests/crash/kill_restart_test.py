#!/usr/bin/env python3
"""Crash test: the real `sestond run`, killed with SIGKILL again and again, counts every
particle exactly once.

A few hundred simulated sample files (seston-sim batch mode), a few with bad rows and a
few with an unusable header, are fed into the drop directory of a live daemon, a small
window of files at a time, in name order. Meanwhile the daemon is killed with SIGKILL
(seeded random choices) and restarted at once, in two ways:

  * at a random moment, 0.05 to 1.5 s after it started;
  * right after it replaced checkpoint.current (its inode changes at the rename), which
    aims at the window between "state written" and "file moved". After each such kill
    the test reads the checkpoint and counts the kills that really landed there: a file
    recorded as committed is still in the drop directory.

When every file is fed and no kill is left, the daemon runs until the drop directory is
empty, and the test checks:

  * every input file is in done/ or quarantine/ exactly once (and nowhere else);
  * per-cluster counts, unclassified and rejected from GET /v1/counts over the whole
    time span equal those of a clean `sestond replay` of the same files with the same
    config (the replay's summary);
  * the count files agree too: the per-cluster sums over every samples_*.csv row equal
    the replay's count files' sums (a row written twice, or lost, shows here).

The model's path depends on the order of the files, so the totals can match a replay
exactly only when the daemon takes the files in name order as the replay does. Files
are therefore fed one at a time by default (--window 1): a file found in the drop
directory at a restart must first settle (drop_directory_watcher.h), while one renamed
in later is taken at once, so with a larger window a restart can take files out of
name order — every particle is still counted once, but into a model that took another
path.

Standard library only. Usage (CTest passes the built binaries):
    kill_restart_test.py --sestond PATH --sim PATH [--work DIR] [--seed N] [--files N]
                         [--kills N] [--aimed-hits N] [--budget SECONDS]
Exit code 0 when every check holds; 1 with the reasons otherwise. The work directory
(with the daemon's log) is removed on success and kept on failure.
"""

import argparse
import csv
import glob
import json
import os
import random
import shutil
import signal
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "support"))
from harness import FEATURES_YAML, free_port, http_request  # noqa: E402

CONFIG = """\
station: "Skerry Sound mooring B (crash test)"
input:
  drop_dir: {root}/drop
  settle_seconds: 0.2
  rescan_seconds: 1
{features}standardize: true
model:
  k: 4
  warmup_particles: 1000
  half_life_particles: 20000
counts:
  bin_seconds: 60
  output_dir: {root}/counts
alerts:
  dir: {root}/alerts
state:
  dir: {root}/state
  checkpoint_seconds: 5
api:
  listen: "127.0.0.1:{port}"
logging:
  level: info
"""

FIRST_TIME = "2026-06-01T00:00:00Z"  # seston-sim's default start
LAST_TIME = "2026-07-01T00:00:00Z"   # well after the last sample of any run here


def write_config(root, port):
    os.makedirs(root, exist_ok=True)
    path = os.path.join(root, "seston.yaml")
    with open(path, "w") as out:
        out.write(CONFIG.format(root=root, port=port, features=FEATURES_YAML))
    return path


def make_inputs(sim, source, files, seed):
    """seston-sim's files, plus damaged ones: bad rows (counted as rejected) and an
    unusable header (quarantined). Returns the sorted file names."""
    subprocess.run([sim, "--out", source, "--samples", str(files), "--concentration-scale", "0.2",
                    "--seed", str(seed), "--scenario", "bloom", "--change-at", "6"],
                   check=True, stdout=subprocess.DEVNULL)
    names = sorted(n for n in os.listdir(source) if n.endswith(".csv"))
    rng = random.Random(seed)
    for name in rng.sample(names, 3):  # a few bad rows: taken, the rows rejected
        with open(os.path.join(source, name), "a") as out:
            out.write("2026-06-01T00:00:00Z,S999999,5.0,not-a-number,1,0.5,2,100\n")
            out.write("not-a-time,S999999,5.0,10,1,0.5,2,100\n")
    for name in rng.sample(names, 2):  # no usable header: quarantined, nothing counted
        with open(os.path.join(source, name), "r+") as out:
            text = out.read()
            out.seek(0)
            out.truncate()
            out.write(text.replace("area_um2", "area", 1))
    return names


def checkpoint_payload(path):
    """The JSON of a checkpoint file, or None when it is missing or damaged."""
    try:
        with open(path, "rb") as handle:
            data = handle.read()
    except OSError:
        return None
    header, _, payload = data.partition(b"\n")
    try:
        return json.loads(payload)
    except ValueError:
        return None


def committed_names(state):
    """Names of files a checkpoint records as committed, wherever the service keeps them."""
    names = set()

    def walk(node):
        if isinstance(node, dict):
            for key, value in node.items():
                if key == "committed_files" and isinstance(value, list):
                    names.update(e.get("name") for e in value if isinstance(e, dict))
                else:
                    walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(state)
    names.discard(None)
    return names


def sample_sums(counts_dir):
    """Sums of every numeric count column over all samples_*.csv rows."""
    sums = {}
    for path in sorted(glob.glob(os.path.join(counts_dir, "samples_*.csv"))):
        with open(path, newline="") as handle:
            for row in csv.DictReader(handle):
                for column, value in row.items():
                    if column.endswith("_count") and value:
                        sums[column] = sums.get(column, 0) + int(value)
    return sums


class Daemon:
    def __init__(self, sestond, config, port, log_path):
        self.sestond, self.config, self.port = sestond, config, port
        self.log = open(log_path, "ab")
        self.process = None
        self.starts = 0

    def start(self):
        self.process = subprocess.Popen([self.sestond, "run", "--config", self.config],
                                        stdout=self.log, stderr=subprocess.STDOUT)
        self.starts += 1
        self.started_at = time.monotonic()

    def alive(self):
        return self.process is not None and self.process.poll() is None

    def kill(self):
        if self.alive():
            self.process.send_signal(signal.SIGKILL)
        if self.process is not None:
            self.process.wait(20)

    def wait_ready(self, timeout=30):
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if not self.alive():
                raise RuntimeError(f"sestond exited with {self.process.returncode} at start")
            try:
                if http_request(self.port, "GET", "/v1/health", timeout=1)[0] == 200:
                    return
            except OSError:
                pass
            time.sleep(0.05)
        raise RuntimeError(f"sestond did not answer /v1/health within {timeout} s")

    def stop(self):
        if self.alive():
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(30)
            except subprocess.TimeoutExpired:
                self.kill()
        self.log.close()


class Feeder:
    """Puts source files into the drop directory in name order, keeping at most `window`
    of them there not yet taken, each written under a hidden name and renamed in."""

    def __init__(self, source, drop, names, window):
        self.source, self.drop, self.names, self.window = source, drop, names, window
        self.next = 0

    def waiting(self):
        return [n for n in os.listdir(self.drop) if n.endswith(".csv") and not n.startswith(".")]

    def top_up(self, limit):
        """Feeds up to `limit` files (as the window allows); returns how many."""
        fed = 0
        room = min(limit, self.window - len(self.waiting()), len(self.names) - self.next)
        while fed < room:
            name = self.names[self.next]
            hidden = os.path.join(self.drop, "." + name + ".part")
            shutil.copyfile(os.path.join(self.source, name), hidden)
            os.rename(hidden, os.path.join(self.drop, name))
            self.next += 1
            fed += 1
        return fed

    def all_fed(self):
        return self.next >= len(self.names)

    def finished(self):
        return self.all_fed() and not self.waiting()


def current_identity(path):
    try:
        info = os.stat(path)
        return (info.st_ino, info.st_mtime_ns, info.st_size)
    except FileNotFoundError:
        return None


def run_live(args, root, names, source, rng, report):
    """Feeds every file while killing and restarting the daemon; returns /v1/counts."""
    port = free_port()
    config = write_config(root, port)
    drop = os.path.join(root, "drop")
    os.makedirs(drop, exist_ok=True)
    current = os.path.join(root, "state", "checkpoint.current")
    daemon = Daemon(args.sestond, config, port, os.path.join(root, "sestond.log"))
    feeder = Feeder(source, drop, names, args.window)
    deadline = time.monotonic() + args.budget
    kills = {"random": 0, "aimed": 0, "aimed_in_window": 0}
    # Files each daemon life may take, so that the kills spread over the whole feed.
    per_life = max(1, -(-len(names) // args.kills))

    def check_budget():
        if time.monotonic() > deadline:
            raise RuntimeError(f"budget of {args.budget} s used up: {kills}, "
                               f"{feeder.next} of {len(names)} files fed")

    def check_alive():
        if not daemon.alive():
            raise RuntimeError(f"sestond exited by itself with {daemon.process.returncode}")

    daemon.start()
    try:
        while (kills["random"] + kills["aimed"] < args.kills or
               kills["aimed_in_window"] < args.aimed_hits):
            check_budget()
            fed = 0
            if not feeder.all_fed() and rng.random() < 0.5:
                # Kill right after the next checkpoint rename: the file it commits is still
                # in the drop directory for a short while.
                before = current_identity(current)
                fed += feeder.top_up(max(1, per_life))
                give_up = time.monotonic() + 10
                while current_identity(current) == before and time.monotonic() < give_up:
                    check_alive()
                daemon.kill()
                kills["aimed"] += 1
                state = checkpoint_payload(current)
                if state is not None and committed_names(state) & set(feeder.waiting()):
                    kills["aimed_in_window"] += 1
            else:
                until = time.monotonic() + rng.uniform(0.05, 1.5)
                while time.monotonic() < until:
                    fed += feeder.top_up(per_life - fed)
                    time.sleep(0.01)
                check_alive()
                daemon.kill()
                kills["random"] += 1
            daemon.start()
        while not feeder.finished():
            check_budget()
            feeder.top_up(len(names))
            time.sleep(0.02)
        daemon.wait_ready()
        status, body = http_request(port, "GET", f"/v1/counts?from={FIRST_TIME}&to={LAST_TIME}")
        if status != 200:
            raise RuntimeError(f"/v1/counts answered {status}: {body}")
        counts = json.loads(body)
    finally:
        daemon.stop()
        report["kills"] = kills
        report["starts"] = daemon.starts
    return counts


def run_replay(args, root, source):
    config = write_config(root, free_port())
    summary_path = os.path.join(root, "summary.json")
    subprocess.run([args.sestond, "replay", "--config", config, "--summary", summary_path,
                    "--quiet", source], check=True, stdout=subprocess.DEVNULL)
    with open(summary_path) as handle:
        return json.load(handle)


def check_files(root, names, problems):
    drop = os.path.join(root, "drop")
    places = {}
    for directory, _, files in os.walk(drop):
        for name in files:
            if name.endswith(".reason"):
                continue
            relative = os.path.relpath(os.path.join(directory, name), drop)
            top = relative.split(os.sep)[0]
            where = top if top in ("done", "quarantine") else "drop"
            places.setdefault(name, []).append(where)
    for name in names:
        found = places.pop(name, [])
        if len(found) != 1 or found[0] not in ("done", "quarantine"):
            problems.append(f"{name}: found in {found or 'nowhere'}, expected once in done/ "
                            f"or quarantine/")
    for name, found in places.items():
        problems.append(f"unexpected file {name} in {found}")
    quarantined = sum(1 for n in os.listdir(os.path.join(drop, "quarantine")) if n.endswith(".csv")) \
        if os.path.isdir(os.path.join(drop, "quarantine")) else 0
    return quarantined


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sestond", required=True)
    parser.add_argument("--sim", required=True)
    parser.add_argument("--work", help="work directory (default: a new temporary one)")
    parser.add_argument("--seed", type=int, default=20260601)
    parser.add_argument("--files", type=int, default=300)
    parser.add_argument("--kills", type=int, default=40, help="SIGKILLs at least")
    parser.add_argument("--aimed-hits", type=int, default=3,
                        help="kills that must land between checkpoint and move, at least")
    parser.add_argument("--window", type=int, default=1, help="files waiting in drop at most")
    parser.add_argument("--budget", type=float, default=240, help="seconds for the live part")
    args = parser.parse_args()

    work = args.work or tempfile.mkdtemp(prefix="seston-crash-")
    if os.path.exists(work):
        shutil.rmtree(work)
    os.makedirs(work)
    rng = random.Random(args.seed)
    started = time.monotonic()
    source = os.path.join(work, "source")
    names = make_inputs(args.sim, source, args.files, args.seed)

    problems = []
    report = {}
    replay = run_replay(args, os.path.join(work, "replay"), source)
    live_root = os.path.join(work, "live")
    try:
        counts = run_live(args, live_root, names, source, rng, report)
    except RuntimeError as error:
        problems.append(str(error))
        counts = None

    if counts is not None:
        expected = {c["id"]: c["count"] for c in replay["clusters"]}
        got = {c["id"]: c["count"] for c in counts["clusters"]}
        if {k: v for k, v in got.items() if v} != {k: v for k, v in expected.items() if v}:
            problems.append(f"per-cluster counts differ: live {got}, replay {expected}")
        for key, replay_value in (("unclassified", replay["particles"]["unclassified"]),
                                  ("rejected", replay["particles"]["rejected"])):
            if counts[key] != replay_value:
                problems.append(f"{key}: live {counts[key]}, replay {replay_value}")
        if counts["total"] != replay["particles"]["accepted"]:
            problems.append(f"total: live {counts['total']}, replay accepted "
                            f"{replay['particles']['accepted']}")
        live_sums = sample_sums(os.path.join(live_root, "counts"))
        replay_sums = sample_sums(os.path.join(work, "replay", "counts"))
        if live_sums != replay_sums:
            problems.append(f"count files differ: live {live_sums}, replay {replay_sums}")
        quarantined = check_files(live_root, names, problems)
        if quarantined != len(replay["files_skipped"]):
            problems.append(f"{quarantined} files quarantined, replay skipped "
                            f"{len(replay['files_skipped'])}")
        kills = report["kills"]
        if kills["random"] + kills["aimed"] < args.kills:
            problems.append(f"only {kills} kills")
        if kills["aimed_in_window"] < args.aimed_hits:
            problems.append(f"only {kills['aimed_in_window']} kills between checkpoint and move")

    elapsed = time.monotonic() - started
    print(f"crash test: {len(names)} files, replay accepted {replay['particles']['accepted']} "
          f"particles in {len(replay['clusters'])} clusters; live: {report.get('kills')} "
          f"over {report.get('starts')} starts; {elapsed:.0f} s")
    if problems:
        print("FAILED:\n  " + "\n  ".join(problems[:40]))
        print(f"work directory kept: {work}")
        log = os.path.join(live_root, "sestond.log")
        if os.path.exists(log):
            with open(log, errors="replace") as handle:
                print("--- sestond.log (tail)\n" + handle.read()[-3000:])
        return 1
    shutil.rmtree(work)
    print("crash test passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
