"""End to end: the live daemon killed with SIGKILL in mid-stream and started again.

Files: a batch of sample files is dropped at once; the daemon is killed after some are
done (at an instant the test does not choose more precisely), restarted, and at the end
every valid row is counted exactly once: the API's totals equal the rows, the clusters
equal a clean `sestond replay` of the same files in name order, and every file is in
done/ exactly once. Labels: a label written with the token survives a SIGKILL. Socket:
a sample whose commit was answered survives a SIGKILL; a sample cut off before its
commit, sent again whole after the restart, is counted once."""

import os
import shutil

import e2e_support as e2e


class RestartTest(e2e.DaemonTestCase):
    def test_killed_mid_stream_counts_every_file_once(self):
        generated = os.path.join(self.scratch, "generated")
        names = self.simulate(generated, samples=24, seed=11)
        daemon = self.daemon(settle=0.2).start()
        for name in names:
            shutil.copy(os.path.join(generated, name), os.path.join(daemon.drop, "." + name))
            os.rename(os.path.join(daemon.drop, "." + name), os.path.join(daemon.drop, name))

        for kill_after in (4, 11, 17):
            e2e.wait_for(lambda: daemon.health()["files"]["done"] >= kill_after, 30,
                         f"{kill_after} files done", interval=0.02)
            daemon.kill()
            daemon.start()

        e2e.wait_for(lambda: daemon.health()["files"]["done"] == len(names), 60,
                     "every file to be done")
        valid_rows = sum(e2e.data_rows(os.path.join(generated, name)) for name in names)
        status, counts = e2e.counts_over_everything(daemon)
        self.assertEqual(status, 200, counts)
        self.assertEqual(counts["total"], valid_rows)
        self.assertEqual(daemon.health()["particles"]["accepted"], valid_rows)
        summary = self.replay_summary([os.path.join(generated, name) for name in names])
        self.assertEqual(e2e.cluster_counts_from_api(daemon), e2e.cluster_counts_from_summary(summary))
        done = [name for _, _, files in os.walk(os.path.join(daemon.drop, "done")) for name in files]
        self.assertEqual(sorted(done), names)
        self.assertEqual([n for n in os.listdir(daemon.drop) if n.endswith(".csv")], [])
        self.assertEqual(daemon.stop(), 0)

    def test_label_and_committed_socket_sample_survive_sigkill(self):
        port = e2e.free_port()
        daemon = self.daemon(socket_port=port).start()
        client = e2e.SocketClient(port)
        lines = [e2e.particle_line(1780000000 + 0.05 * i, "R1", i) for i in range(800)]
        client.send_lines(lines + [e2e.close_line("R1")])
        self.assertEqual(client.read_until(lambda r: any("committed" in x for x in r))[-1],
                         {"committed": "R1", "particles": 800})
        # A second sample, cut off before its close.
        client.send_lines([e2e.particle_line(1780000100 + 0.05 * i, "R2", i) for i in range(300)])
        e2e.wait_for(lambda: daemon.health()["particles"]["accepted"] == 1100, 20,
                     "R2's particles to be taken")
        status, body = daemon.request("PUT", "/v1/clusters/2/label",
                                      body='{"label":"long chains"}', token=e2e.TOKEN)
        self.assertEqual(status, 200, body)
        client.close()
        daemon.kill()

        daemon.start()
        clusters = daemon.get("/v1/clusters")[1]["clusters"]
        self.assertEqual([c["label"] for c in clusters if c["id"] == 2], ["long chains"])
        # R2 again, whole, on a new connection: what the daemon holds of it is skipped.
        client = e2e.SocketClient(port)
        client.send_lines([e2e.particle_line(1780000100 + 0.05 * i, "R2", i) for i in range(300)]
                          + [e2e.close_line("R2")])
        self.assertEqual(client.read_until(lambda r: any("committed" in x for x in r))[-1],
                         {"committed": "R2", "particles": 300})
        client.close()
        status, counts = e2e.counts_over_everything(daemon)
        self.assertEqual(counts["total"], 1100)
        self.assertEqual(daemon.stop(), 0)


if __name__ == "__main__":
    e2e.main()
