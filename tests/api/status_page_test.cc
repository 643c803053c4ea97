// The status page and the two endpoints it reads besides the original API: /v1/series
// (with ApiBackend's default, built on Counts) and /v1/particles/recent.
#include "api/status_page.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "api/router.h"

namespace seston {
namespace {

// 1764633600 is 2025-12-02T00:00:00Z (GNU date: `date -u -d @1764633600`).
constexpr double kMidnight = 1764633600;

// Counts of a made-up station: cluster 1 has 10 particles per minute of the window,
// cluster 2 appears at 01:00; 1 mL per minute. The latest particle is at 06:00.
class StationBackend : public ApiBackend {
 public:
  HealthView Health() override { return {}; }
  Result<CountsView> Counts(std::optional<double> from, std::optional<double> to,
                            std::optional<double> window) override {
    calls.push_back({from, to, window});
    if (!counted) return Status::FailedPrecondition("warming up: 10 of 5000 particles");
    CountsView view;
    view.to_seconds = to.value_or(kMidnight + 6 * 3600);
    view.from_seconds = from.value_or(view.to_seconds - window.value_or(3600));
    double minutes = (view.to_seconds - view.from_seconds) / 60;
    view.volume_ml = minutes;
    view.clusters.push_back({1, "", static_cast<std::uint64_t>(10 * minutes), 10.0});
    if (view.from_seconds >= kMidnight + 3600) {
      view.clusters.push_back({2, "diatom chains", static_cast<std::uint64_t>(minutes), 1.0});
    }
    return view;
  }
  std::vector<ClusterView> Clusters() override { return {}; }
  Status SetLabel(std::uint32_t, std::string) override { return Status::Ok(); }
  nlohmann::json Alerts() override { return nlohmann::json::object(); }
  Status AcceptBaseline() override { return Status::Ok(); }
  std::string Metrics() override { return ""; }

  struct Call {
    std::optional<double> from, to, window;
  };
  std::vector<Call> calls;
  bool counted = true;
};

class RecentBackend final : public StationBackend {
 public:
  RecentParticlesView RecentParticles(std::size_t limit) override {
    asked = limit;
    RecentParticlesView view;
    view.columns = {"area_um2", "aspect_ratio"};
    view.particles.push_back({kMidnight + 0.25, 3, {120.5, 0.8}});
    return view;
  }
  std::size_t asked = 0;
};

HttpResponse Get(ApiBackend& backend, const std::string& target) {
  return Route({"GET", target, "", ""}, backend, "");
}

TEST(StatusPage, IsOneDocumentThatNeedsNothingFromOutside) {
  std::string_view page = StatusPageHtml();
  EXPECT_TRUE(page.starts_with("<!doctype html>"));
  EXPECT_TRUE(page.ends_with("</html>\n"));
  // Every script and style is inline: no src=, no stylesheet link, no http(s) URL other
  // than the SVG namespace name (which is a name, never fetched).
  EXPECT_EQ(page.find("src="), std::string_view::npos);
  EXPECT_EQ(page.find("<link"), std::string_view::npos);
  std::string rest(page);
  const std::string svg_namespace = "http://www.w3.org/2000/svg";
  for (std::size_t at; (at = rest.find(svg_namespace)) != std::string::npos;) {
    rest.erase(at, svg_namespace.size());
  }
  EXPECT_EQ(rest.find("http://"), std::string::npos);
  EXPECT_EQ(rest.find("https://"), std::string::npos);
}

TEST(StatusPage, ReadsTheEndpointsItDrawsAndMarksWhenItIsDone) {
  std::string_view page = StatusPageHtml();
  for (std::string_view used : {"/v1/health", "/v1/clusters", "/v1/alerts",
                                "/v1/particles/recent?limit=", "/v1/series?step=10m&steps=36",
                                "/v1/series?step=6h&steps=56", "data-ready", "data-points"}) {
    EXPECT_NE(page.find(used), std::string_view::npos) << used;
  }
}

TEST(StatusPage, IsServedAtTheRoot) {
  StationBackend backend;
  HttpResponse response = Get(backend, "/");
  EXPECT_EQ(response.status, 200);
  EXPECT_EQ(response.content_type, "text/html; charset=utf-8");
  EXPECT_EQ(response.body, StatusPageHtml());
}

TEST(SeriesEndpoint, DefaultSplitsTheSpanEndingAtTheLatestParticleIntoSteps) {
  StationBackend backend;
  HttpResponse response = Get(backend, "/v1/series?step=1h&steps=6");
  ASSERT_EQ(response.status, 200) << response.body;
  nlohmann::json series = nlohmann::json::parse(response.body);
  EXPECT_EQ(series["from"], "2025-12-02T00:00:00Z");
  EXPECT_EQ(series["to"], "2025-12-02T06:00:00Z");
  EXPECT_EQ(series["step_seconds"], 3600);
  EXPECT_EQ(series["clusters"], (nlohmann::json::array({{{"id", 1}, {"label", ""}},
                                                        {{"id", 2}, {"label", "diatom chains"}}})));
  ASSERT_EQ(series["points"].size(), 6u);
  EXPECT_EQ(series["points"][0]["from"], "2025-12-02T00:00:00Z");
  EXPECT_EQ(series["points"][0]["concentration_per_ml"], (nlohmann::json{{"1", 10.0}}));
  EXPECT_EQ(series["points"][5]["from"], "2025-12-02T05:00:00Z");
  EXPECT_EQ(series["points"][5]["concentration_per_ml"], (nlohmann::json{{"1", 10.0}, {"2", 1.0}}));
  EXPECT_EQ(series["points"][5]["volume_ml"], 60.0);
  // One call for the whole span (to settle its end), then one per step with from and to.
  ASSERT_EQ(backend.calls.size(), 7u);
  EXPECT_FALSE(backend.calls[0].to.has_value());
  EXPECT_EQ(backend.calls[0].window, 6 * 3600.0);
  EXPECT_EQ(backend.calls[3].from, kMidnight + 2 * 3600);
  EXPECT_EQ(backend.calls[3].to, kMidnight + 3 * 3600);
}

TEST(SeriesEndpoint, EndsAtAGivenTimeAndDefaultsToADayOfHours) {
  StationBackend backend;
  HttpResponse response = Get(backend, "/v1/series?to=2025-12-02T03:00:00Z");
  ASSERT_EQ(response.status, 200) << response.body;
  nlohmann::json series = nlohmann::json::parse(response.body);
  EXPECT_EQ(series["points"].size(), 24u);
  EXPECT_EQ(series["from"], "2025-12-01T03:00:00Z");
  EXPECT_EQ(backend.calls[0].to, kMidnight + 3 * 3600);
}

TEST(SeriesEndpoint, RefusesBadArgumentsWithTheirNames) {
  StationBackend backend;
  for (std::string target :
       {"/v1/series?steps=0", "/v1/series?steps=1001", "/v1/series?steps=x", "/v1/series?step=-1h",
        "/v1/series?step=300d&steps=2", "/v1/series?to=yesterday", "/v1/series?window=1h"}) {
    HttpResponse response = Get(backend, target);
    EXPECT_EQ(response.status, 400) << target;
  }
  EXPECT_NE(Get(backend, "/v1/series?steps=0")
                .body.find("steps must be a whole number from 1 "
                           "to 1000"),
            std::string::npos);
  EXPECT_TRUE(backend.calls.empty());
}

TEST(SeriesEndpoint, PassesOnWarmUpAsServiceUnavailable) {
  StationBackend backend;
  backend.counted = false;
  HttpResponse response = Get(backend, "/v1/series");
  EXPECT_EQ(response.status, 503);
  EXPECT_NE(response.body.find("warming up"), std::string::npos);
}

TEST(RecentParticlesEndpoint, ListsParticlesWithTheirColumnsInInputUnits) {
  RecentBackend backend;
  HttpResponse response = Get(backend, "/v1/particles/recent?limit=50");
  ASSERT_EQ(response.status, 200);
  EXPECT_EQ(backend.asked, 50u);
  EXPECT_EQ(
      nlohmann::json::parse(response.body),
      (nlohmann::json{
          {"columns", {"area_um2", "aspect_ratio"}},
          {"particles",
           {{{"time", "2025-12-02T00:00:00.250Z"}, {"cluster", 3}, {"values", {120.5, 0.8}}}}}}));
  Get(backend, "/v1/particles/recent");
  EXPECT_EQ(backend.asked, 2000u);
}

TEST(RecentParticlesEndpoint, DefaultHasNoneAndLimitsAreChecked) {
  StationBackend backend;
  HttpResponse response = Get(backend, "/v1/particles/recent");
  ASSERT_EQ(response.status, 200);
  EXPECT_EQ(nlohmann::json::parse(response.body),
            (nlohmann::json{{"columns", nlohmann::json::array()},
                            {"particles", nlohmann::json::array()}}));
  EXPECT_EQ(Get(backend, "/v1/particles/recent?limit=0").status, 400);
  EXPECT_EQ(Get(backend, "/v1/particles/recent?limit=10001").status, 400);
  EXPECT_EQ(Get(backend, "/v1/particles/recent?count=5").status, 400);
  EXPECT_EQ(Route({"POST", "/v1/particles/recent", "", ""}, backend, "").status, 405);
}

}  // namespace
}  // namespace seston
