"""End to end: sample files dropped into the live daemon's drop directory, some renamed
in, some written slowly under their final name, some unusable; then the API's counts are
checked against the rows written and against `sestond replay` of the same files in the
same order. Also the API's error answers (413, 400, 401) and a label write."""

import json
import os
import shutil
import subprocess
import time

import e2e_support as e2e


class DropDirectoryTest(e2e.DaemonTestCase):
    def test_counts_equal_valid_rows_and_replay(self):
        generated = os.path.join(self.scratch, "generated")
        names = self.simulate(generated, samples=10, seed=7)
        daemon = self.daemon(settle=0.5).start()
        os.makedirs(daemon.drop, exist_ok=True)

        # One at a time, each waited for, so the daemon reads them in name order (a slow
        # write that settles late could otherwise be overtaken by a later rename).
        for index, name in enumerate(names):
            source = os.path.join(generated, name)
            target = os.path.join(daemon.drop, name)
            if index % 2 == 0:
                shutil.copy(source, os.path.join(daemon.drop, "." + name + ".part"))
                os.rename(os.path.join(daemon.drop, "." + name + ".part"), target)
            else:
                with open(source, "rb") as data:
                    content = data.read()
                with open(target, "wb") as out:
                    for start in range(0, len(content), len(content) // 3 + 1):
                        out.write(content[start:start + len(content) // 3 + 1])
                        out.flush()
                        time.sleep(0.3)  # shorter than settle_seconds: not taken early
            e2e.wait_for(lambda: daemon.health()["files"]["done"] == index + 1, 20,
                         f"{name} to be done")

        bad = {
            "a-empty.csv": b"",
            "b-binary.csv": bytes(range(256)) * 8,
            "c-header-only.csv": b"time,sample,volume_ml,area_um2,esd_um,aspect_ratio,"
                                 b"perimeter_um,grey_level\n",
            "d-missing-column.csv": b"time,sample,volume_ml,area_um2\n"
                                    b"2026-06-01T00:00:00Z,S9,5,100\n",
        }
        for name, content in bad.items():
            with open(os.path.join(daemon.drop, "." + name), "wb") as out:
                out.write(content)
            os.rename(os.path.join(daemon.drop, "." + name), os.path.join(daemon.drop, name))
        e2e.wait_for(lambda: daemon.health()["files"]["quarantined"] == len(bad), 20,
                     "the bad files to be quarantined")
        quarantine = os.path.join(daemon.drop, "quarantine")
        for name in bad:
            self.assertTrue(os.path.exists(os.path.join(quarantine, name)), name)
            with open(os.path.join(quarantine, name + ".reason")) as reason:
                self.assertTrue(reason.read().strip(), f"{name}.reason is empty")

        valid_rows = sum(e2e.data_rows(os.path.join(generated, name)) for name in names)
        status, counts = e2e.counts_over_everything(daemon)
        self.assertEqual(status, 200, counts)
        self.assertEqual(counts["total"] + counts["rejected"], valid_rows)
        self.assertEqual(counts["rejected"], 0)
        health = daemon.health()
        self.assertEqual(health["particles"]["accepted"], valid_rows)
        self.assertEqual(health["state"], "running")

        summary = self.replay_summary([os.path.join(generated, name) for name in names])
        self.assertEqual(summary["particles"]["accepted"], valid_rows)
        expected = e2e.cluster_counts_from_summary(summary)
        self.assertEqual(e2e.cluster_counts_from_api(daemon), expected)
        window = {row["id"]: row["count"] for row in counts["clusters"] if row["count"] > 0}
        self.assertEqual(window, {key: value for key, value in expected.items() if value > 0})

        done = [name for _, _, files in os.walk(os.path.join(daemon.drop, "done")) for name in files]
        self.assertEqual(sorted(done), names)
        self.assertEqual(daemon.stop(), 0)

    def test_http_errors_and_label_write(self):
        generated = os.path.join(self.scratch, "generated")
        names = self.simulate(generated, samples=3, seed=3)
        daemon = self.daemon().start()
        for name in names:
            shutil.copy(os.path.join(generated, name), os.path.join(daemon.drop, "." + name))
            os.rename(os.path.join(daemon.drop, "." + name), os.path.join(daemon.drop, name))
        e2e.wait_for(lambda: daemon.health()["state"] == "running", 20, "the model fit")

        huge = '{"label":"' + "x" * 200000 + '"}'
        status, _ = daemon.request("PUT", "/v1/clusters/1/label", body=huge, token=e2e.TOKEN)
        self.assertEqual(status, 413)
        status, body = daemon.get("/v1/counts?window=banana")
        self.assertEqual(status, 400)
        self.assertIn("window", body["error"]["message"])
        status, _ = daemon.request("PUT", "/v1/clusters/1/label", body='{"label":"tiny"}')
        self.assertEqual(status, 401)
        status, _ = daemon.request("PUT", "/v1/clusters/999/label", body='{"label":"tiny"}',
                                   token=e2e.TOKEN)
        self.assertEqual(status, 404)
        status, body = daemon.request("PUT", "/v1/clusters/1/label",
                                      body='{"label":"small rounded cells"}', token=e2e.TOKEN)
        self.assertEqual(status, 200, body)
        clusters = daemon.get("/v1/clusters")[1]["clusters"]
        self.assertEqual([c["label"] for c in clusters if c["id"] == 1], ["small rounded cells"])
        ctl = [e2e.BINARIES["ctl"], "--api", f"127.0.0.1:{daemon.api_port}"]
        shown = subprocess.run(ctl + ["--json", "clusters"], check=True, capture_output=True,
                               text=True).stdout
        self.assertEqual([c["label"] for c in json.loads(shown)["clusters"] if c["id"] == 1],
                         ["small rounded cells"])
        table = subprocess.run(ctl + ["status"], check=True, capture_output=True, text=True).stdout
        self.assertIn("running", table)
        status, metrics = daemon.get("/metrics")
        self.assertEqual(status, 200)
        self.assertIn("seston_particles_accepted_total", metrics)
        self.assertEqual(daemon.stop(), 0)


if __name__ == "__main__":
    e2e.main()
