// The payload checked here follows the Alertmanager API v2 (its OpenAPI description,
// postableAlert: labels, annotations, startsAt, endsAt, generatorURL; times in RFC 3339).
#include "alerts/alertmanager_client.h"

#include <gtest/gtest.h>

#include <atomic>
#include <chrono>
#include <mutex>
#include <thread>
#include <vector>

namespace seston {
namespace {

constexpr double kNow = 1796181600;  // 2026-12-02T03:20:00Z

AlertEvent Raised(std::string kind, std::uint32_t cluster, double since, double time) {
  AlertEvent event;
  event.event = "raised";
  event.kind = std::move(kind);
  event.severity = "alarm";
  event.since_seconds = since;
  event.time_seconds = time;
  event.clusters = {{cluster, "diatom chains"}};
  event.message = "cluster 3 rose from 12 % to 41 % of particles";
  event.what_to_check = "look at recent images";
  event.station = "Skerry Sound mooring B";
  return event;
}

AlertEvent Resolved(AlertEvent raised, double time) {
  raised.event = "resolved";
  raised.time_seconds = time;
  return raised;
}

AlertmanagerOptions Options() {
  AlertmanagerOptions options;
  options.url = "http://127.0.0.1:9093";
  options.resend_seconds = 60;
  options.max_retry_seconds = 8;
  return options;
}

nlohmann::json Parse(const std::optional<std::string>& body) {
  EXPECT_TRUE(body.has_value());
  return body ? nlohmann::json::parse(*body) : nlohmann::json();
}

TEST(ParseAlertmanagerUrl, TakesHostPortAndAPrefix) {
  Result<AlertmanagerEndpoint> plain = ParseAlertmanagerUrl("http://127.0.0.1:9093");
  ASSERT_TRUE(plain.ok());
  EXPECT_EQ(plain->host_port, "127.0.0.1:9093");
  EXPECT_EQ(plain->target, "/api/v2/alerts");
  Result<AlertmanagerEndpoint> prefixed = ParseAlertmanagerUrl("http://am.lan:80/monitor/am/");
  ASSERT_TRUE(prefixed.ok());
  EXPECT_EQ(prefixed->host_port, "am.lan:80");
  EXPECT_EQ(prefixed->target, "/monitor/am/api/v2/alerts");
  EXPECT_EQ(ParseAlertmanagerUrl("http://[::1]:9093")->host_port, "[::1]:9093");
}

TEST(ParseAlertmanagerUrl, RefusesWhatItCannotReach) {
  for (std::string_view url :
       {"https://127.0.0.1:9093", "http://127.0.0.1", "http://:9093", "http://h:0",
        "http://h:99999", "http://h:90x", "127.0.0.1:9093", "http://h:9093/a?b"}) {
    Result<AlertmanagerEndpoint> endpoint = ParseAlertmanagerUrl(url);
    EXPECT_EQ(endpoint.status().code(), StatusCode::kInvalidArgument) << url;
    if (!endpoint.ok()) {
      EXPECT_NE(endpoint.status().message().find(url), std::string::npos);
    }
  }
}

TEST(AlertmanagerAlert, HasStableLabelsAndTheWordsInAnnotations) {
  nlohmann::json alert = AlertmanagerAlert(Raised("composition", 3, kNow - 600, kNow), kNow - 600,
                                           kNow + 240, "http://127.0.0.1:7460/");
  EXPECT_EQ(alert["labels"], (nlohmann::json{{"alertname", "seston_composition"},
                                             {"kind", "composition"},
                                             {"cluster", "3"},
                                             {"station", "Skerry Sound mooring B"},
                                             {"severity", "alarm"}}));
  EXPECT_EQ(alert["annotations"]["summary"],
            "composition at Skerry Sound mooring B (cluster 3, diatom chains)");
  EXPECT_EQ(alert["annotations"]["description"],
            "cluster 3 rose from 12 % to 41 % of particles What to check: look at recent images");
  EXPECT_NE(alert["annotations"]["caution"].get<std::string>().find("screening aid"),
            std::string::npos);
  EXPECT_EQ(alert["startsAt"], "2026-12-02T03:10:00.000Z");
  EXPECT_EQ(alert["endsAt"], "2026-12-02T03:24:00.000Z");
  EXPECT_EQ(alert["generatorURL"], "http://127.0.0.1:7460/");

  AlertEvent whole = Raised("fit", 0, kNow, kNow);
  whole.clusters.clear();
  EXPECT_EQ(AlertmanagerAlert(whole, kNow, kNow, "")["labels"]["cluster"], "none");
  EXPECT_FALSE(AlertmanagerAlert(whole, kNow, kNow, "").contains("generatorURL"));
}

TEST(AlertmanagerForwarder, PostsARaiseThenResendsWhileActiveThenEndsItOnResolve) {
  AlertmanagerForwarder forwarder(Options(), "");
  EXPECT_FALSE(forwarder.Due(kNow).has_value()) << "nothing to say yet";
  forwarder.Observe(Raised("composition", 3, kNow - 600, kNow), kNow);
  nlohmann::json first = Parse(forwarder.Due(kNow));
  ASSERT_EQ(first.size(), 1u);
  EXPECT_EQ(first[0]["startsAt"], "2026-12-02T03:10:00.000Z");
  EXPECT_EQ(first[0]["endsAt"], "2026-12-02T03:24:00.000Z");  // now + 4 x 60 s
  forwarder.Delivered(kNow);
  EXPECT_FALSE(forwarder.Due(kNow + 59).has_value());
  EXPECT_EQ(forwarder.NextDue(), kNow + 60);

  nlohmann::json again = Parse(forwarder.Due(kNow + 60));
  EXPECT_EQ(again[0]["startsAt"], first[0]["startsAt"]) << "the start does not move";
  EXPECT_EQ(again[0]["endsAt"], "2026-12-02T03:25:00.000Z");
  forwarder.Delivered(kNow + 60);

  forwarder.Observe(Resolved(Raised("composition", 3, kNow - 600, kNow), kNow + 90), kNow + 95);
  nlohmann::json last = Parse(forwarder.Due(kNow + 95));
  ASSERT_EQ(last.size(), 1u);
  EXPECT_EQ(last[0]["labels"], first[0]["labels"]);
  EXPECT_EQ(last[0]["endsAt"], "2026-12-02T03:21:30.000Z");  // the resolve time
  forwarder.Delivered(kNow + 95);
  EXPECT_EQ(forwarder.stats().pending, 0u);
  EXPECT_FALSE(forwarder.NextDue().has_value());
  EXPECT_FALSE(forwarder.Due(kNow + 1000).has_value());
  EXPECT_EQ(forwarder.stats().posts_ok, 3u);
}

TEST(AlertmanagerForwarder, KeepsTimesInOrderWhenTheInstrumentClockRunsAhead) {
  AlertmanagerForwarder forwarder(Options(), "");
  // Event times an hour ahead of the wall clock.
  forwarder.Observe(Raised("novelty", 5, kNow + 3600, kNow + 3600), kNow);
  nlohmann::json raised = Parse(forwarder.Due(kNow));
  EXPECT_EQ(raised[0]["startsAt"], "2026-12-02T03:20:00.000Z");
  forwarder.Delivered(kNow);
  forwarder.Observe(Resolved(Raised("novelty", 5, kNow + 3600, kNow + 3600), kNow + 7200),
                    kNow + 10);
  nlohmann::json resolved = Parse(forwarder.Due(kNow + 10));
  EXPECT_EQ(resolved[0]["endsAt"], "2026-12-02T03:20:10.000Z") << "no later than now";
}

TEST(AlertmanagerForwarder, BacksOffDoublingUpToTheMaximumAndKeepsTheAlerts) {
  AlertmanagerForwarder forwarder(Options(), "");
  forwarder.Observe(Raised("composition", 3, kNow, kNow), kNow);
  double now = kNow;
  std::vector<double> pauses;
  for (int attempt = 0; attempt < 6; ++attempt) {
    ASSERT_TRUE(forwarder.Due(now).has_value()) << attempt;
    forwarder.Failed(now, "connection refused");
    ASSERT_TRUE(forwarder.NextDue().has_value());
    pauses.push_back(*forwarder.NextDue() - now);
    EXPECT_FALSE(forwarder.Due(now + pauses.back() - 0.01).has_value()) << "waits the pause out";
    now += pauses.back();
  }
  EXPECT_EQ(pauses, (std::vector<double>{1, 2, 4, 8, 8, 8}));
  EXPECT_EQ(forwarder.stats().posts_failed, 6u);
  EXPECT_EQ(forwarder.stats().last_error, "connection refused");
  ASSERT_TRUE(forwarder.Due(now).has_value());
  forwarder.Delivered(now);
  EXPECT_EQ(forwarder.NextDue(), now + 60) << "a success ends the back-off";
}

TEST(AlertmanagerForwarder, ARefusedPayloadIsNotRetried) {
  AlertmanagerForwarder forwarder(Options(), "");
  forwarder.Observe(Raised("composition", 3, kNow, kNow), kNow);
  ASSERT_TRUE(forwarder.Due(kNow).has_value());
  forwarder.Delivered(kNow, "HTTP 400");
  EXPECT_FALSE(forwarder.Due(kNow + 1).has_value());
  EXPECT_EQ(forwarder.stats().posts_refused, 1u);
  EXPECT_EQ(forwarder.stats().last_error, "HTTP 400");
}

TEST(AlertmanagerForwarder, AChangeDuringAPostIsSentAgain) {
  AlertmanagerForwarder forwarder(Options(), "");
  AlertEvent raised = Raised("composition", 3, kNow, kNow);
  forwarder.Observe(raised, kNow);
  ASSERT_TRUE(forwarder.Due(kNow).has_value());
  forwarder.Observe(Resolved(raised, kNow + 1), kNow + 1);  // arrives while posting
  forwarder.Delivered(kNow + 2);
  nlohmann::json next = Parse(forwarder.Due(kNow + 2));
  EXPECT_EQ(next[0]["endsAt"], "2026-12-02T03:20:01.000Z");
}

TEST(AlertmanagerForwarder, EndsAResolveWhoseRaiseItNeverSaw) {
  AlertmanagerForwarder forwarder(Options(), "");
  forwarder.Observe(Resolved(Raised("fit", 2, kNow - 300, kNow - 300), kNow - 10), kNow);
  nlohmann::json body = Parse(forwarder.Due(kNow));
  EXPECT_EQ(body[0]["startsAt"], "2026-12-02T03:15:00.000Z");
  EXPECT_EQ(body[0]["endsAt"], "2026-12-02T03:19:50.000Z");
}

TEST(AlertmanagerForwarder, PostsAOneOffOnceWithALease) {
  AlertmanagerForwarder forwarder(Options(), "");
  AlertEvent born = Raised("new_cluster", 9, kNow, kNow);
  born.severity = "warning";
  forwarder.Observe(born, kNow);
  nlohmann::json body = Parse(forwarder.Due(kNow));
  EXPECT_EQ(body[0]["labels"]["severity"], "warning");
  EXPECT_EQ(body[0]["endsAt"], "2026-12-02T03:24:00.000Z");
  forwarder.Delivered(kNow);
  EXPECT_EQ(forwarder.stats().pending, 0u);
  EXPECT_FALSE(forwarder.Due(kNow + 600).has_value());
}

TEST(AlertmanagerForwarder, DropsTheOldestEndedAlertsFirstWhenFull) {
  AlertmanagerOptions options = Options();
  options.max_pending_alerts = 3;
  AlertmanagerForwarder forwarder(options, "");
  forwarder.Observe(Raised("composition", 1, kNow, kNow), kNow);
  forwarder.Observe(Resolved(Raised("fit", 2, kNow, kNow), kNow), kNow);
  forwarder.Observe(Resolved(Raised("fit", 3, kNow, kNow), kNow), kNow);
  forwarder.Observe(Raised("composition", 4, kNow, kNow), kNow);
  EXPECT_EQ(forwarder.stats().alerts_dropped, 1u);
  nlohmann::json body = Parse(forwarder.Due(kNow));
  std::vector<std::string> clusters;
  for (const auto& alert : body) clusters.push_back(alert["labels"]["cluster"]);
  EXPECT_EQ(clusters, (std::vector<std::string>{"1", "4", "3"}));  // fit 2 was dropped
}

// Records the posts; fails the first `failures` of them.
struct RecordingPoster {
  std::mutex mutex;
  std::vector<std::string> bodies;
  std::vector<std::string> targets;
  int failures = 0;
  std::atomic<int> calls{0};

  AlertPoster Poster() {
    return [this](const AlertmanagerEndpoint& endpoint, const std::string& body,
                  double) -> Result<int> {
      std::lock_guard lock(mutex);
      ++calls;
      targets.push_back(endpoint.host_port + endpoint.target);
      if (failures > 0) {
        --failures;
        return Status::Unavailable("connection refused");
      }
      bodies.push_back(body);
      return 200;
    };
  }
  std::size_t Delivered() {
    std::lock_guard lock(mutex);
    return bodies.size();
  }
};

bool WaitFor(const std::function<bool()>& condition, double seconds) {
  auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
  while (!condition()) {
    if (std::chrono::steady_clock::now() > deadline) return false;
    std::this_thread::sleep_for(std::chrono::milliseconds(5));
  }
  return true;
}

TEST(AlertmanagerClient, RetriesOnItsOwnThreadWithoutHoldingUpTheCaller) {
  RecordingPoster poster;
  poster.failures = 1;
  Result<std::unique_ptr<AlertmanagerClient>> client =
      AlertmanagerClient::Create(Options(), "", poster.Poster(), SystemClock::Instance());
  ASSERT_TRUE(client.ok()) << client.status().ToString();
  auto started = std::chrono::steady_clock::now();
  (*client)->Observe(Raised("composition", 3, kNow, kNow));
  EXPECT_LT(std::chrono::steady_clock::now() - started, std::chrono::milliseconds(100));
  ASSERT_TRUE(WaitFor([&] { return poster.Delivered() == 1; }, 5));
  EXPECT_EQ(poster.calls.load(), 2) << "one failure, one retry after 1 s";
  AlertmanagerForwarder::Stats stats = (*client)->stats();
  EXPECT_EQ(stats.posts_failed, 1u);
  EXPECT_EQ(stats.posts_ok, 1u);
  EXPECT_EQ(stats.pending, 1u) << "still active";
  std::lock_guard lock(poster.mutex);
  EXPECT_EQ(poster.targets.front(), "127.0.0.1:9093/api/v2/alerts");
}

TEST(AlertmanagerClient, ReconfigureMovesPostsToTheNewUrl) {
  RecordingPoster poster;
  auto client = AlertmanagerClient::Create(Options(), "", poster.Poster(), SystemClock::Instance());
  ASSERT_TRUE(client.ok());
  AlertmanagerOptions moved = Options();
  moved.url = "http://127.0.0.1:9094/am";
  ASSERT_TRUE((*client)->Reconfigure(moved).ok());
  moved.url = "ftp://x";
  EXPECT_FALSE((*client)->Reconfigure(moved).ok());
  (*client)->Observe(Raised("composition", 3, kNow, kNow));
  ASSERT_TRUE(WaitFor([&] { return poster.Delivered() == 1; }, 5));
  std::lock_guard lock(poster.mutex);
  EXPECT_EQ(poster.targets.back(), "127.0.0.1:9094/am/api/v2/alerts");
}

TEST(AlertmanagerClient, StopsPromptlyWhileBackingOff) {
  RecordingPoster poster;
  poster.failures = 1000;
  auto client = AlertmanagerClient::Create(Options(), "", poster.Poster(), SystemClock::Instance());
  ASSERT_TRUE(client.ok());
  (*client)->Observe(Raised("composition", 3, kNow, kNow));
  ASSERT_TRUE(WaitFor([&] { return poster.calls.load() >= 1; }, 5));
  auto started = std::chrono::steady_clock::now();
  client->reset();
  EXPECT_LT(std::chrono::steady_clock::now() - started, std::chrono::milliseconds(500));
}

}  // namespace
}  // namespace seston
