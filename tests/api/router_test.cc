#include "api/router.h"

#include <gtest/gtest.h>

#include "fake_backend.h"

namespace seston {
namespace {

using testing::FakeBackend;

constexpr char kToken[] = "s3cret-token-for-tests";

// 1764633600 is 2025-12-02T00:00:00Z (checked with GNU date: `date -u -d @1764633600`).
constexpr double kDecemberSecond2025 = 1764633600;

HttpResponse Get(FakeBackend& backend, const std::string& target) {
  return Route({"GET", target, "", ""}, backend, kToken);
}

nlohmann::json Body(const HttpResponse& response) { return nlohmann::json::parse(response.body); }

std::string ErrorMessage(const HttpResponse& response) {
  return Body(response)["error"]["message"].get<std::string>();
}

std::optional<std::string> HeaderOf(const HttpResponse& response, const std::string& name) {
  for (const auto& [key, value] : response.headers) {
    if (key == name) return value;
  }
  return std::nullopt;
}

class RouterTest : public ::testing::Test {
 protected:
  RouterTest() {
    backend.clusters = {
        {3, "", 120, {{"esd_um", 12.5}, {"aspect", 0.8}}, 0.9, kDecemberSecond2025, false},
        {4, "diatom chains", 7, {{"esd_um", 40.0}}, 1.1, kDecemberSecond2025 + 60, true}};
  }

  HttpResponse PutLabel(const std::string& id, const std::string& body,
                        const std::string& authorization = std::string("Bearer ") + kToken,
                        const std::string& token = kToken) {
    return Route({"PUT", "/v1/clusters/" + id + "/label", authorization, body}, backend, token);
  }

  FakeBackend backend;
};

TEST_F(RouterTest, HealthHasEveryFieldWithIsoTimesAndNulls) {
  backend.health = {
      "running", 12.5, kDecemberSecond2025,      2,       300,         "", 1000, 7, 12, 40,
      1,         6,    "Skerry Sound mooring B", "0.1.0", std::nullopt};
  HttpResponse response = Get(backend, "/v1/health");
  ASSERT_EQ(response.status, 200);
  EXPECT_EQ(response.content_type, "application/json");
  nlohmann::json health = Body(response);
  EXPECT_EQ(health["state"], "running");
  EXPECT_EQ(health["uptime_seconds"], 12.5);
  EXPECT_EQ(health["last_particle_time"], "2025-12-02T00:00:00Z");
  EXPECT_EQ(health["backlog"], (nlohmann::json{{"files", 2}, {"records", 300}}));
  EXPECT_EQ(health["last_error"], "");
  EXPECT_EQ(health["particles"],
            (nlohmann::json{{"accepted", 1000}, {"rejected", 7}, {"unclassified", 12}}));
  EXPECT_EQ(health["files"], (nlohmann::json{{"done", 40}, {"quarantined", 1}}));
  EXPECT_EQ(health["k"], 6);
  EXPECT_EQ(health["station"], "Skerry Sound mooring B");
  EXPECT_EQ(health["version"], "0.1.0");
  EXPECT_TRUE(health["last_checkpoint_time"].is_null());
  EXPECT_EQ(health.size(), 11u);
}

TEST_F(RouterTest, HealthWhileWarmingUpHasNullParticleTime) {
  backend.health.state = "warming-up";
  nlohmann::json health = Body(Get(backend, "/v1/health"));
  EXPECT_EQ(health["state"], "warming-up");
  EXPECT_TRUE(health["last_particle_time"].is_null());
}

TEST_F(RouterTest, CountsWindowAcceptsEachSuffix) {
  const std::pair<const char*, double> cases[] = {
      {"3600", 3600}, {"45s", 45}, {"90m", 5400}, {"1h", 3600}, {"2d", 172800}};
  for (const auto& [text, seconds] : cases) {
    backend.counts_calls.clear();
    HttpResponse response = Get(backend, std::string("/v1/counts?window=") + text);
    ASSERT_EQ(response.status, 200) << text << ": " << response.body;
    ASSERT_EQ(backend.counts_calls.size(), 1u);
    EXPECT_EQ(backend.counts_calls[0].window, seconds) << text;
    EXPECT_FALSE(backend.counts_calls[0].from.has_value());
    EXPECT_FALSE(backend.counts_calls[0].to.has_value());
  }
}

TEST_F(RouterTest, CountsWithoutParametersLeavesTheWindowToTheBackend) {
  ASSERT_EQ(Get(backend, "/v1/counts").status, 200);
  ASSERT_EQ(backend.counts_calls.size(), 1u);
  EXPECT_FALSE(backend.counts_calls[0].window || backend.counts_calls[0].from ||
               backend.counts_calls[0].to);
}

TEST_F(RouterTest, CountsFromToAreParsedAsIsoOrPercentEncoded) {
  HttpResponse response =
      Get(backend, "/v1/counts?from=2025-12-02T00:00:00Z&to=2025-12-02T01%3A00%3A00.5%2B00%3A00");
  ASSERT_EQ(response.status, 200) << response.body;
  ASSERT_EQ(backend.counts_calls.size(), 1u);
  EXPECT_EQ(backend.counts_calls[0].from, kDecemberSecond2025);
  EXPECT_EQ(backend.counts_calls[0].to, kDecemberSecond2025 + 3600.5);
  EXPECT_FALSE(backend.counts_calls[0].window.has_value());
}

TEST_F(RouterTest, CountsToWithWindowIsPassedOn) {
  ASSERT_EQ(Get(backend, "/v1/counts?to=1764633600&window=10m").status, 200);
  ASSERT_EQ(backend.counts_calls.size(), 1u);
  EXPECT_EQ(backend.counts_calls[0].to, kDecemberSecond2025);
  EXPECT_EQ(backend.counts_calls[0].window, 600.0);
}

TEST_F(RouterTest, CountsRejectsBadWindowsAndTimes) {
  const std::pair<const char*, const char*> cases[] = {
      {"window=0", "not a duration"},
      {"window=-1h", "not a duration"},
      {"window=soon", "not a duration"},
      {"window=401d", "400 days"},
      {"from=yesterday", "from must be an ISO 8601"},
      {"from=2025-12-02T01:00:00Z&to=2025-12-02T00:00:00Z", "earlier than to"},
      {"from=2025-12-02T00:00:00Z&to=2025-12-02T00:00:00Z", "earlier than to"},
      {"from=2024-01-01T00:00:00Z&to=2025-12-02T00:00:00Z", "400 days"},
      {"from=2025-12-02T00:00:00Z&window=1h", "either window or from"},
      {"window=1h&window=2h", "more than once"},
      {"window=%zz", "percent escape"},
  };
  for (const auto& [query, message] : cases) {
    HttpResponse response = Get(backend, std::string("/v1/counts?") + query);
    EXPECT_EQ(response.status, 400) << query;
    EXPECT_NE(ErrorMessage(response).find(message), std::string::npos)
        << query << ": " << ErrorMessage(response);
  }
  EXPECT_TRUE(backend.counts_calls.empty());
}

TEST_F(RouterTest, CountsAcceptsExactlyFourHundredDays) {
  EXPECT_EQ(Get(backend, "/v1/counts?window=400d").status, 200);
}

TEST_F(RouterTest, UnknownParametersAreNamed) {
  HttpResponse response = Get(backend, "/v1/counts?windw=1h&colour=red");
  ASSERT_EQ(response.status, 400);
  EXPECT_NE(ErrorMessage(response).find("\"colour\", \"windw\""), std::string::npos)
      << ErrorMessage(response);
  EXPECT_NE(ErrorMessage(response).find("accepted here: from, to, window"), std::string::npos);
  HttpResponse health = Get(backend, "/v1/health?verbose=1");
  EXPECT_EQ(health.status, 400);
  EXPECT_NE(ErrorMessage(health).find("\"verbose\""), std::string::npos);
}

TEST_F(RouterTest, CountsJsonShapeAndNullConcentrations) {
  backend.counts = {kDecemberSecond2025,
                    kDecemberSecond2025 + 3600,
                    {{3, "", 30, 1.5}, {4, "diatom chains", 0, std::nullopt}},
                    5,
                    0.25,
                    2,
                    20.0,
                    35};
  nlohmann::json counts = Body(Get(backend, "/v1/counts?window=1h"));
  EXPECT_EQ(counts["from"], "2025-12-02T00:00:00Z");
  EXPECT_EQ(counts["to"], "2025-12-02T01:00:00Z");
  EXPECT_EQ(counts["window_seconds"], 3600.0);
  ASSERT_EQ(counts["clusters"].size(), 2u);
  EXPECT_EQ(
      counts["clusters"][0],
      (nlohmann::json{{"id", 3}, {"label", ""}, {"count", 30}, {"concentration_per_ml", 1.5}}));
  EXPECT_TRUE(counts["clusters"][1]["concentration_per_ml"].is_null());
  EXPECT_EQ(counts["unclassified"], 5);
  EXPECT_EQ(counts["unclassified_per_ml"], 0.25);
  EXPECT_EQ(counts["rejected"], 2);
  EXPECT_EQ(counts["volume_ml"], 20.0);
  EXPECT_EQ(counts["total"], 35);
}

TEST_F(RouterTest, CountsNotReadyIsServiceUnavailableWithRetryAfter) {
  backend.counts_status = Status::FailedPrecondition("warming up: 120 of 5000 particles");
  HttpResponse response = Get(backend, "/v1/counts?window=1h");
  EXPECT_EQ(response.status, 503);
  EXPECT_EQ(HeaderOf(response, "Retry-After"), "5");
  EXPECT_EQ(ErrorMessage(response), "warming up: 120 of 5000 particles");
  EXPECT_EQ(Body(response)["error"]["status"], 503);
}

TEST_F(RouterTest, ClustersJsonHasCentreByColumn) {
  nlohmann::json body = Body(Get(backend, "/v1/clusters"));
  ASSERT_EQ(body["clusters"].size(), 2u);
  const nlohmann::json& first = body["clusters"][0];
  EXPECT_EQ(first["id"], 3);
  EXPECT_EQ(first["label"], "");
  EXPECT_EQ(first["count"], 120);
  EXPECT_EQ(first["centre"], (nlohmann::json{{"esd_um", 12.5}, {"aspect", 0.8}}));
  EXPECT_EQ(first["spread"], 0.9);
  EXPECT_EQ(first["born_time"], "2025-12-02T00:00:00Z");
  EXPECT_EQ(first["retired"], false);
  EXPECT_EQ(body["clusters"][1]["born_time"], "2025-12-02T00:01:00Z");
  EXPECT_EQ(body["clusters"][1]["retired"], true);
}

TEST_F(RouterTest, LabelWithTokenRenamesCluster) {
  HttpResponse response = PutLabel("3", R"({"label": "small flagellates"})");
  ASSERT_EQ(response.status, 200) << response.body;
  EXPECT_EQ(Body(response), (nlohmann::json{{"id", 3}, {"label", "small flagellates"}}));
  EXPECT_EQ(backend.clusters[0].label, "small flagellates");
}

TEST_F(RouterTest, LabelSchemeIsCaseInsensitive) {
  // RFC 7235 section 2.1: the authentication scheme is case-insensitive.
  EXPECT_EQ(PutLabel("3", R"({"label": "x"})", std::string("bearer ") + kToken).status, 200);
}

TEST_F(RouterTest, WritesWithoutConfiguredTokenAreForbidden) {
  HttpResponse response = PutLabel("3", R"({"label": "x"})", "Bearer anything", "");
  EXPECT_EQ(response.status, 403);
  EXPECT_NE(ErrorMessage(response).find("api.token_file"), std::string::npos);
  HttpResponse baseline = Route({"POST", "/v1/baseline", "", ""}, backend, "");
  EXPECT_EQ(baseline.status, 403);
  EXPECT_EQ(backend.baselines_accepted, 0);
  EXPECT_EQ(backend.clusters[0].label, "");
}

TEST_F(RouterTest, MissingTokenIsUnauthorizedWithChallenge) {
  HttpResponse response = PutLabel("3", R"({"label": "x"})", "");
  EXPECT_EQ(response.status, 401);
  EXPECT_EQ(HeaderOf(response, "WWW-Authenticate"), "Bearer realm=\"sestond\"");
  EXPECT_EQ(backend.clusters[0].label, "");
}

TEST_F(RouterTest, WrongTokenOrSchemeIsUnauthorized) {
  for (const std::string& authorization :
       {std::string("Bearer wrong"), std::string("Bearer ") + kToken + "x",
        std::string("Bearer s3cret"), std::string("Basic ") + kToken, std::string(kToken)}) {
    HttpResponse response = PutLabel("3", R"({"label": "x"})", authorization);
    EXPECT_EQ(response.status, 401) << authorization;
    ASSERT_TRUE(HeaderOf(response, "WWW-Authenticate").has_value()) << authorization;
    EXPECT_TRUE(HeaderOf(response, "WWW-Authenticate")->starts_with("Bearer realm=\"sestond\""));
  }
  EXPECT_EQ(HeaderOf(PutLabel("3", "{}", "Bearer wrong"), "WWW-Authenticate"),
            "Bearer realm=\"sestond\", error=\"invalid_token\"");
  EXPECT_EQ(backend.clusters[0].label, "");
}

TEST_F(RouterTest, LabelForUnknownOrMalformedIdIsNotFound) {
  HttpResponse unknown = PutLabel("99", R"({"label": "x"})");
  EXPECT_EQ(unknown.status, 404);
  EXPECT_EQ(ErrorMessage(unknown), "no cluster with id 99");
  EXPECT_EQ(PutLabel("abc", R"({"label": "x"})").status, 404);
  EXPECT_EQ(PutLabel("-1", R"({"label": "x"})").status, 404);
  EXPECT_EQ(PutLabel("4294967296", R"({"label": "x"})").status, 404);  // 2^32
}

TEST_F(RouterTest, LabelAcceptsSixtyFourMultibyteCharacters) {
  std::string label;
  for (int i = 0; i < 64; ++i) label += "\xC3\xA9";  // U+00E9, two bytes each
  HttpResponse response = PutLabel("3", nlohmann::json{{"label", label}}.dump());
  EXPECT_EQ(response.status, 200) << response.body;
  EXPECT_EQ(backend.clusters[0].label, label);
}

TEST_F(RouterTest, LabelValidationRejectsBadLabelsAndBodies) {
  const std::pair<std::string, const char*> cases[] = {
      {R"({"label": ""})", "1 to 64 characters, got 0"},
      {nlohmann::json{{"label", std::string(65, 'a')}}.dump(), "1 to 64 characters, got 65"},
      {R"({"label": "bell\u0007"})", "control characters (character 5)"},
      {R"({"label": "tab\there"})", "control characters"},
      {R"({"label": "next\u0085line"})", "control characters"},  // C1 control NEL
      {R"({"label": "a\u2028b"})", "control characters"},        // line separator
      {R"({"label": " padded"})", "start or end with a space"},
      {R"({"label": 5})", "{\"label\": \"NAME\"}"},
      {R"({"label": "x", "colour": "red"})", "and nothing else"},
      {R"(["x"])", "and nothing else"},
      {"label=x", "and nothing else"},
      {"{\"label\": \"\xC3\x28\"}", "and nothing else"},  // invalid UTF-8 fails JSON parsing
  };
  for (const auto& [body, message] : cases) {
    HttpResponse response = PutLabel("3", body);
    EXPECT_EQ(response.status, 400) << body;
    EXPECT_NE(ErrorMessage(response).find(message), std::string::npos)
        << body << ": " << ErrorMessage(response);
  }
  EXPECT_EQ(backend.clusters[0].label, "");
}

TEST_F(RouterTest, BaselineNeedsTokenAndReportsBackendState) {
  EXPECT_EQ(Route({"POST", "/v1/baseline", "", ""}, backend, kToken).status, 401);
  HttpResponse accepted =
      Route({"POST", "/v1/baseline", std::string("Bearer ") + kToken, ""}, backend, kToken);
  EXPECT_EQ(accepted.status, 200);
  EXPECT_EQ(Body(accepted), (nlohmann::json{{"baseline", "accepted"}}));
  backend.baseline_status = Status::FailedPrecondition("no model yet: still warming up");
  HttpResponse early =
      Route({"POST", "/v1/baseline", std::string("Bearer ") + kToken, ""}, backend, kToken);
  EXPECT_EQ(early.status, 503);
  EXPECT_EQ(ErrorMessage(early), "no model yet: still warming up");
  EXPECT_EQ(backend.baselines_accepted, 2);
}

TEST_F(RouterTest, WrongMethodIsNotAllowedWithAllowHeader) {
  const std::tuple<const char*, const char*, const char*> cases[] = {
      {"POST", "/v1/health", "GET"},   {"DELETE", "/v1/counts", "GET"},
      {"GET", "/v1/baseline", "POST"}, {"GET", "/v1/clusters/3/label", "PUT"},
      {"PUT", "/v1/clusters", "GET"},  {"POST", "/metrics", "GET"},
  };
  for (const auto& [method, target, allow] : cases) {
    HttpResponse response = Route({method, target, "", ""}, backend, kToken);
    EXPECT_EQ(response.status, 405) << method << " " << target;
    EXPECT_EQ(HeaderOf(response, "Allow"), allow) << method << " " << target;
    EXPECT_EQ(Body(response)["error"]["status"], 405);
  }
}

TEST_F(RouterTest, UnknownPathIsNotFound) {
  for (const char* target : {"/v2/health", "/v1/health/", "/v1/clusters/3", "/etc/passwd",
                             "/v1/clusters//label", "/../v1/health"}) {
    HttpResponse response = Get(backend, target);
    EXPECT_EQ(response.status, 404) << target;
    EXPECT_EQ(Body(response)["error"]["status"], 404);
  }
}

TEST_F(RouterTest, AlertsArePassedThrough) {
  backend.alerts = {{"active", {{{"kind", "composition"}, {"cluster", 3}}}},
                    {"recent", nlohmann::json::array()}};
  EXPECT_EQ(Body(Get(backend, "/v1/alerts")), backend.alerts);
}

TEST_F(RouterTest, MetricsAreTextExposition) {
  backend.metrics = "# TYPE seston_particles_total counter\nseston_particles_total 5\n";
  HttpResponse response = Get(backend, "/metrics");
  EXPECT_EQ(response.status, 200);
  // Prometheus text exposition format: "text/plain; version=0.0.4".
  EXPECT_TRUE(response.content_type.starts_with("text/plain; version=0.0.4"));
  EXPECT_EQ(response.body, backend.metrics);
}

TEST_F(RouterTest, RootIsHtml) {
  HttpResponse response = Get(backend, "/");
  EXPECT_EQ(response.status, 200);
  EXPECT_TRUE(response.content_type.starts_with("text/html"));
  EXPECT_NE(response.body.find("/v1/health"), std::string::npos);
}

TEST_F(RouterTest, BackendExceptionBecomesInternalError) {
  backend.throw_on_health = true;
  HttpResponse response = Get(backend, "/v1/health");
  EXPECT_EQ(response.status, 500);
  EXPECT_NE(ErrorMessage(response).find("snapshot missing"), std::string::npos);
}

TEST_F(RouterTest, InvalidUtf8FromBackendIsReplacedNotThrown) {
  backend.health.last_error = "disk \xFF full";
  HttpResponse response = Get(backend, "/v1/health");
  EXPECT_EQ(response.status, 200);
  EXPECT_EQ(Body(response)["last_error"], "disk \xEF\xBF\xBD full");  // U+FFFD
}

TEST(ErrorResponse, HasStatusAndMessage) {
  HttpResponse response = ErrorResponse(413, "too big");
  EXPECT_EQ(response.status, 413);
  EXPECT_EQ(response.content_type, "application/json");
  EXPECT_EQ(nlohmann::json::parse(response.body),
            (nlohmann::json{{"error", {{"status", 413}, {"message", "too big"}}}}));
}

}  // namespace
}  // namespace seston
