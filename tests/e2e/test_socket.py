"""End to end: NDJSON particles over the live daemon's TCP socket.

Several clients at once, one of them reading its replies slowly: every particle sent is
counted (the API's total equals what was sent, and each commit names its sample's
particles). An over-long line and a connection past the limit are answered with errors.
Memory: about two million particles in one stream, and the daemon's peak resident size
(VmHWM) after the second half is not materially above that after the first half."""

import os
import threading
import time

import e2e_support as e2e

PARTICLES_PER_SAMPLE = 400


def sample_lines(client_index, sample_index, first_time):
    sample = f"C{client_index}-S{sample_index:05d}"
    lines = [e2e.particle_line(first_time + 0.05 * i, sample, i + client_index)
             for i in range(PARTICLES_PER_SAMPLE)]
    return sample, lines


class SocketTest(e2e.DaemonTestCase):
    def test_concurrent_clients_lose_nothing_and_limits_answer(self):
        port = e2e.free_port()
        daemon = self.daemon(socket_port=port, max_connections=4, max_line_bytes=4096).start()
        clients, samples_per_client = 3, 6
        results = {}

        def run(client_index, slow):
            client = e2e.SocketClient(port)
            sent = {}
            for s in range(samples_per_client):
                # Interleaved event times: every client covers the same hours.
                first = 1780000000 + s * 60 + client_index
                sample, lines = sample_lines(client_index, s, first)
                lines.append(e2e.close_line(sample))
                client.send_lines(lines)
                sent[sample] = PARTICLES_PER_SAMPLE
            commits = {}

            def all_committed(replies):
                if slow:
                    time.sleep(0.2)  # a reader that takes its time
                for reply in replies[len(commits):]:
                    if "committed" in reply:
                        commits[reply["committed"]] = reply["particles"]
                return len(commits) == samples_per_client

            client.read_until(all_committed, timeout=60)
            client.close()
            results[client_index] = (sent, commits)

        threads = [threading.Thread(target=run, args=(i, i == 0)) for i in range(clients)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join(90)
        self.assertEqual(len(results), clients)
        for sent, commits in results.values():
            self.assertEqual(commits, sent)

        total_sent = clients * samples_per_client * PARTICLES_PER_SAMPLE
        status, counts = e2e.counts_over_everything(daemon)
        self.assertEqual(status, 200, counts)
        self.assertEqual(counts["total"], total_sent)
        self.assertEqual(daemon.health()["particles"]["accepted"], total_sent)

        # A bad record and an over-long line are answered and the connection goes on.
        client = e2e.SocketClient(port)
        client.send_lines(['{"time":"yesterday","sample":"X1"}', "{" + "x" * 5000 + "}",
                           e2e.particle_line(1780009000, "X1", 1), e2e.close_line("X1")])
        replies = client.read_until(lambda r: any("committed" in x for x in r))
        reasons = [reply.get("reason") for reply in replies if "rejected" in reply]
        self.assertIn("line_too_long", reasons)
        self.assertEqual(len(reasons), 2)
        self.assertEqual([r for r in replies if "committed" in r],
                         [{"committed": "X1", "particles": 1}])
        client.close()

        # The connection limit: four idle connections, the fifth is told why and closed
        # (closed clients are let go once reply_linger_seconds pass).
        time.sleep(1.5)
        idle = [e2e.SocketClient(port) for _ in range(4)]
        time.sleep(0.3)
        refused = e2e.SocketClient(port)
        reply = refused.read_reply()
        self.assertIn("too many connections", reply["error"])
        self.assertIsNone(refused.read_reply())
        for connection in idle + [refused]:
            connection.close()
        self.assertEqual(daemon.stop(), 0)

    def test_memory_does_not_grow_with_the_stream(self):
        port = e2e.free_port()
        # Retention bounds small enough to be reached within the first half, so that the
        # second half shows what the stream itself costs.
        daemon = self.daemon(socket_port=port, log_level="warn", retained_bins=200,
                             retained_samples=200).start()
        total = int(os.environ.get("SESTON_E2E_PARTICLES", "2000000"))
        commits, (first, second) = e2e.stream_samples(daemon, total, PARTICLES_PER_SAMPLE)
        self.assertEqual(commits, total // PARTICLES_PER_SAMPLE)
        print(f"\nVmHWM after {total // 2} particles: {first} KiB; after {total}: {second} KiB")
        # Growth allowed: 5 % plus 4 MiB of allocator slack.
        self.assertLess(second, first * 1.05 + 4 * 1024)
        self.assertEqual(daemon.stop(), 0)

if __name__ == "__main__":
    e2e.main()
