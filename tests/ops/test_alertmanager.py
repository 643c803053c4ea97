"""A real Alertmanager receives seston's drift alert raised by a bloom, then resolved.

The outside reference is Prometheus's Alertmanager (Debian's `prometheus-alertmanager`):
its API v2 must accept our posts, list the alert with our labels while it is active,
and send a receiver the "firing" and then the "resolved" notification — the latter
only if our endsAt really ends the alert.
"""

import http.server
import json
import os
import shutil
import tempfile
import threading
import time
import urllib.parse

import ops_support
from ops_support import (TOKEN, Process, Station, free_port, get_json, http_request,
                         require_tool, wait_for)

import unittest


class Receiver(http.server.ThreadingHTTPServer):
    """An Alertmanager web hook receiver that keeps every notification."""

    def __init__(self):
        self.notifications = []
        self.lock = threading.Lock()
        outer = self

        class Handler(http.server.BaseHTTPRequestHandler):
            def do_POST(self):
                body = self.rfile.read(int(self.headers.get("Content-Length", "0")))
                with outer.lock:
                    outer.notifications.append(json.loads(body))
                self.send_response(200)
                self.end_headers()

            def log_message(self, *args):
                pass

        super().__init__(("127.0.0.1", 0), Handler)

    def statuses(self, alertname):
        with self.lock:
            return [alert["status"] for note in self.notifications for alert in note["alerts"]
                    if alert["labels"].get("alertname") == alertname]


class AlertmanagerForwarding(unittest.TestCase):
    def setUp(self):
        self.alertmanager = require_tool("prometheus-alertmanager")

    def start_alertmanager(self, directory, receiver_port):
        port, cluster_port = free_port(), free_port()
        os.makedirs(directory)
        config = os.path.join(directory, "alertmanager.yml")
        with open(config, "w", encoding="utf-8") as handle:
            handle.write("route:\n  receiver: hook\n  group_by: [alertname, cluster]\n"
                         "  group_wait: 1s\n  group_interval: 1s\n  repeat_interval: 1h\n"
                         "receivers:\n  - name: hook\n    webhook_configs:\n"
                         f"      - url: 'http://127.0.0.1:{receiver_port}/'\n"
                         "        send_resolved: true\n")
        server = Process([self.alertmanager, f"--config.file={config}",
                          f"--storage.path={directory}/data",
                          f"--web.listen-address=127.0.0.1:{port}",
                          f"--cluster.listen-address=127.0.0.1:{cluster_port}",
                          "--cluster.peer-timeout=1s"],
                         os.path.join(directory, "alertmanager.log"))
        self.addCleanup(server.stop)
        wait_for(lambda: http_request(port, "GET", "/-/ready")[0] == 200, 30,
                 "the Alertmanager to be ready")
        return port

    def test_bloom_is_raised_then_resolved_in_the_alertmanager(self):
        receiver = Receiver()
        threading.Thread(target=receiver.serve_forever, daemon=True).start()
        self.addCleanup(receiver.shutdown)

        scratch = tempfile.mkdtemp(prefix="seston-ops-am-")
        self.addCleanup(shutil.rmtree, scratch, True)
        manager_port = self.start_alertmanager(os.path.join(scratch, "am"),
                                               receiver.server_address[1])
        station = Station(self, evaluate_every=500,
                          alertmanager_url=f"http://127.0.0.1:{manager_port}")
        # One steady hour, then the diatom bloom (6-fold within half an hour) for one more.
        station.write_samples(24, scenario="bloom",
                              extra=("--change-at", "1", "--ramp", "0.5"))
        station.start()

        def raised():
            alerts = get_json(manager_port, "/api/v2/alerts")
            return [a for a in alerts if a["labels"]["alertname"] == "seston_composition"]
        active = wait_for(raised, 90, "a seston_composition alert in the Alertmanager", 0.5)
        labels = active[0]["labels"]
        self.assertEqual(labels["kind"], "composition")
        self.assertEqual(labels["station"], "Skerry Sound mooring B (operations test)")
        self.assertEqual(labels["severity"], "alarm")
        self.assertTrue(labels["cluster"].isdigit(), labels)
        self.assertEqual(active[0]["status"]["state"], "active")
        self.assertIn("screening aid", active[0]["annotations"]["caution"])
        self.assertTrue(active[0]["generatorURL"].startswith("http://127.0.0.1:"))
        wait_for(lambda: "firing" in receiver.statuses("seston_composition"), 30,
                 "the receiver to be notified of the firing alert")

        # The technician accepts the bloom as the new normal; the composition detector
        # then finds nothing against it and the alert resolves after resolve_after
        # evaluations of more bloom water.
        status, body = http_request(station.api_port, "POST", "/v1/baseline",
                                    headers={"Authorization": "Bearer " + TOKEN})
        self.assertEqual(status, 200, body)
        station.write_samples(12, first_sample=25, start="2026-06-01T02:00:00Z",
                              scenario="bloom", extra=("--change-at", "0", "--ramp", "0"))
        wait_for(lambda: "resolved" in receiver.statuses("seston_composition"), 90,
                 "the receiver to be notified that the alert resolved", 0.5)
        self.assertEqual(raised(), [], "the Alertmanager lists the alert no more")
        metrics = station.metrics()
        self.assertGreaterEqual(
            ops_support.metric_value(metrics, 'seston_alertmanager_posts_total{result="ok"}'), 2)
        self.assertEqual(
            ops_support.metric_value(metrics, 'seston_alertmanager_posts_total{result="refused"}'), 0)


if __name__ == "__main__":
    ops_support.main()
