"""A real Prometheus server scrapes sestond; its HTTP API must hold seston's values.

The outside references: Prometheus itself (Debian's `prometheus` package), which parses
/metrics with its own text-format parser, and `promtool check metrics`, its linter of
the exposition format and naming conventions.
"""

import json
import os
import subprocess
import urllib.parse

import ops_support
from ops_support import Process, Station, free_port, get_json, require_tool, wait_for

import unittest


class PrometheusScrape(unittest.TestCase):
    def setUp(self):
        self.prometheus = require_tool("prometheus")
        self.promtool = require_tool("promtool")

    def test_metrics_page_passes_promtool(self):
        station = Station(self)
        station.write_samples(8)
        station.start().wait_files_done(8)
        page = station.metrics()
        checked = subprocess.run([self.promtool, "check", "metrics"], input=page.encode(),
                                 capture_output=True, timeout=30)
        self.assertEqual(checked.returncode, 0,
                         checked.stdout.decode() + checked.stderr.decode())
        self.assertEqual(checked.stdout.decode() + checked.stderr.decode(), "",
                         "promtool reports no lint problems")

    def test_prometheus_scrapes_the_accepted_particles_and_concentrations(self):
        station = Station(self)
        station.write_samples(8)
        station.start()
        health = station.wait_files_done(8)
        accepted = health["particles"]["accepted"]
        self.assertGreater(accepted, 6000)  # about 860 particles per simulated sample

        port = free_port()
        directory = os.path.join(station.directory, "prometheus")
        os.makedirs(directory)
        config = os.path.join(directory, "prometheus.yml")
        with open(config, "w", encoding="utf-8") as handle:
            handle.write("global:\n  scrape_interval: 1s\n  scrape_timeout: 1s\n"
                         "scrape_configs:\n  - job_name: seston\n    static_configs:\n"
                         f"      - targets: ['127.0.0.1:{station.api_port}']\n")
        server = Process([self.prometheus, f"--config.file={config}",
                          f"--storage.tsdb.path={directory}/data",
                          f"--web.listen-address=127.0.0.1:{port}"],
                         os.path.join(directory, "prometheus.log"))
        self.addCleanup(server.stop)

        def query(expression):
            answer = get_json(port, "/api/v1/query?" + urllib.parse.urlencode({"query": expression}))
            self.assertEqual(answer["status"], "success")
            return answer["data"]["result"]

        result = wait_for(lambda: query("seston_particles_accepted_total"), 60,
                          "Prometheus to scrape seston_particles_accepted_total")
        self.assertEqual(result[0]["metric"]["job"], "seston")
        self.assertEqual(float(result[0]["value"][1]), accepted)

        up = query('up{job="seston"}')
        self.assertEqual(up[0]["value"][1], "1")
        # The per-cluster concentrations over the last hour, one series per cluster, as
        # the daemon's own page says them.
        page = station.metrics()
        series = query("seston_cluster_concentration_per_millilitre")
        self.assertEqual(len(series), health["k"])
        for sample in series:
            cluster = sample["metric"]["cluster"]
            own = ops_support.metric_value(
                page, f'seston_cluster_concentration_per_millilitre{{cluster="{cluster}",label=""}}')
            self.assertAlmostEqual(float(sample["value"][1]), own, places=9)
        info = query("seston_build_info")
        self.assertEqual(info[0]["metric"]["version"], health["version"])


if __name__ == "__main__":
    ops_support.main()
