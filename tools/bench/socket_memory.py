#!/usr/bin/env python3
"""Benchmark: peak resident memory of `sestond run` fed a long NDJSON stream.

Starts the daemon in a scratch directory, streams PARTICLES particles over its socket in
closed samples of 400, and prints the daemon's VmHWM (peak resident set, from
/proc/PID/status) once the first half is counted and at the end, with the rate. A flat
peak shows that memory does not grow with the stream (retention bounds of the count book
are reached early: 200 bins, 200 samples).

    tools/bench/socket_memory.py --build build/demo --particles 10000000
"""

import argparse
import os
import shutil
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "e2e"))
import e2e_support as e2e  # noqa: E402


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--build", default=os.path.join(ROOT, "build", "demo"),
                        help="build directory holding daemon/sestond (default build/demo)")
    parser.add_argument("--particles", type=int, default=10_000_000,
                        help="particles to stream (default 10000000)")
    args = parser.parse_args()
    e2e.BINARIES["sestond"] = os.path.join(args.build, "daemon", "sestond")
    scratch = tempfile.mkdtemp(prefix="seston-bench-")
    daemon = e2e.Daemon(scratch, socket_port=e2e.free_port(), log_level="warn",
                        retained_bins=200, retained_samples=200)
    try:
        daemon.start()
        started = time.monotonic()
        commits, (first, second) = e2e.stream_samples(daemon, args.particles)
        seconds = time.monotonic() - started
        print(f"particles streamed:        {args.particles}")
        print(f"samples committed:         {commits}")
        print(f"VmHWM after the first half: {first / 1024:.1f} MiB")
        print(f"VmHWM at the end:           {second / 1024:.1f} MiB")
        print(f"rate:                      {args.particles / seconds:.0f} particles/s "
              f"(sender included)")
        daemon.stop()
    finally:
        daemon.kill()
        shutil.rmtree(scratch, ignore_errors=True)


if __name__ == "__main__":
    main()
