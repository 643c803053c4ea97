"""sestond under a service manager's notify protocol (sd_notify(3)): READY=1 once it
serves, WATCHDOG=1 at half of $WATCHDOG_USEC, STOPPING=1 on SIGTERM. A Python datagram
socket plays systemd's part, as systemd itself would bind $NOTIFY_SOCKET."""

import os
import socket
import time

import ops_support
from ops_support import Station, wait_for

import unittest


class Notify(unittest.TestCase):
    def test_ready_watchdog_and_stopping_reach_the_notify_socket(self):
        station = Station(self)
        station.write_samples(4)
        path = os.path.join(station.directory, "notify.sock")
        manager = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
        manager.bind(path)
        manager.settimeout(0.2)
        self.addCleanup(manager.close)
        # The daemon inherits these; without WATCHDOG_PID the watchdog is its own.
        os.environ.update(NOTIFY_SOCKET=path, WATCHDOG_USEC="1000000")
        os.environ.pop("WATCHDOG_PID", None)
        self.addCleanup(os.environ.pop, "NOTIFY_SOCKET", None)
        self.addCleanup(os.environ.pop, "WATCHDOG_USEC", None)
        station.start()
        messages = []

        def receive_until(condition, seconds):
            deadline = time.monotonic() + seconds
            while time.monotonic() < deadline and not condition():
                try:
                    messages.append(manager.recv(4096).decode())
                except socket.timeout:
                    pass
            return condition()

        self.assertTrue(receive_until(lambda: any(m.startswith("READY=1\n") for m in messages), 10),
                        messages)
        ready = next(m for m in messages if m.startswith("READY=1\n"))
        self.assertIn(f"STATUS=running: drop directory {station.directory}/drop", ready)
        # Pings every 0.5 s: at least 4 in 3 s, none before READY.
        started = len(messages)
        receive_until(lambda: False, 3)
        pings = [m for m in messages[started:] if m == "WATCHDOG=1"]
        self.assertGreaterEqual(len(pings), 4, messages)
        self.assertLessEqual(len(pings), 8, messages)
        self.assertNotIn("WATCHDOG=1", messages[:messages.index(ready)])

        station.daemon.signal(15)
        self.assertTrue(receive_until(lambda: any(m.startswith("STOPPING=1") for m in messages), 10),
                        messages)
        self.assertEqual(station.daemon.stop(), 0)


if __name__ == "__main__":
    ops_support.main()
