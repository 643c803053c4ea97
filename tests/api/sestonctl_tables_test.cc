#include <gtest/gtest.h>

#include "sestonctl/tables.h"

namespace seston::ctl {
namespace {

TEST(FormatTable, PadsColumnsAndAlignsNumbersRight) {
  std::string table = FormatTable({{"id", Align::kRight}, {"label"}, {"count", Align::kRight}},
                                  {{"3", "ciliates", "120"}, {"12", "x", "7"}});
  EXPECT_EQ(table,
            "id  label     count\n"
            " 3  ciliates    120\n"
            "12  x             7\n");
}

TEST(FormatTable, CountsCodePointsNotBytesForWidth) {
  // "é" is two bytes in UTF-8 but one column on a terminal.
  std::string table =
      FormatTable({{"label"}, {"n", Align::kRight}}, {{"\xC3\xA9t\xC3\xA9", "1"}, {"abcd", "2"}});
  EXPECT_EQ(table,
            "label  n\n"
            "\xC3\xA9t\xC3\xA9    1\n"
            "abcd   2\n");
}

TEST(FormatNumber, KeepsIntegersAndFourSignificantDigits) {
  EXPECT_EQ(FormatNumber(42), "42");
  EXPECT_EQ(FormatNumber(42.0), "42");
  EXPECT_EQ(FormatNumber(0.012346), "0.01235");
  EXPECT_EQ(FormatNumber(1.5), "1.5");
  EXPECT_EQ(FormatNumber(1234.5), "1234.5");
  EXPECT_EQ(FormatNumber(152340.0), "152340");
  EXPECT_EQ(FormatNumber(2.5e-7), "2.5e-07");
  EXPECT_EQ(FormatNumber(nullptr), "-");
  EXPECT_EQ(FormatNumber("12"), "-");
}

TEST(FormatDuration, PicksTheTwoLargestUnits) {
  EXPECT_EQ(FormatDuration(45), "45 s");
  EXPECT_EQ(FormatDuration(754), "12 min 34 s");
  EXPECT_EQ(FormatDuration(3600), "1 h");
  EXPECT_EQ(FormatDuration(7380), "2 h 3 min");
  EXPECT_EQ(FormatDuration(273600), "3 d 4 h");
  EXPECT_EQ(FormatDuration(-1), "-");
}

TEST(FormatCounts, ShowsWindowUnitsAndRows) {
  nlohmann::json counts = {
      {"from", "2025-12-02T00:00:00Z"},
      {"to", "2025-12-02T01:00:00Z"},
      {"window_seconds", 3600.0},
      {"clusters",
       {{{"id", 3}, {"label", ""}, {"count", 30}, {"concentration_per_ml", 1.5}},
        {{"id", 4}, {"label", "diatom chains"}, {"count", 0}, {"concentration_per_ml", nullptr}}}},
      {"unclassified", 5},
      {"unclassified_per_ml", 0.25},
      {"rejected", 2},
      {"volume_ml", 20.0},
      {"total", 35}};
  EXPECT_EQ(FormatCounts(counts),
            "window 2025-12-02T00:00:00Z to 2025-12-02T01:00:00Z (1 h), 20 mL analysed\n"
            "\n"
            "id  label                    count  conc. /mL\n"
            " 3  (unlabelled)                30        1.5\n"
            " 4  diatom chains                0          -\n"
            "    unclassified                 5       0.25\n"
            "    total                       35\n"
            "    rejected (not in total)      2\n");
}

TEST(FormatStatus, ListsEveryHealthField) {
  nlohmann::json health = {
      {"state", "running"},
      {"uptime_seconds", 7380.0},
      {"last_particle_time", "2025-12-02T00:00:00Z"},
      {"backlog", {{"files", 2}, {"records", 300}}},
      {"last_error", ""},
      {"particles", {{"accepted", 1000}, {"rejected", 7}, {"unclassified", 12}}},
      {"files", {{"done", 40}, {"quarantined", 1}}},
      {"k", 6},
      {"station", "Skerry Sound mooring B"},
      {"version", "0.1.0"},
      {"last_checkpoint_time", nullptr}};
  EXPECT_EQ(FormatStatus(health),
            "station          Skerry Sound mooring B\n"
            "state            running\n"
            "version          0.1.0\n"
            "uptime           2 h 3 min\n"
            "clusters (k)     6\n"
            "last particle    2025-12-02T00:00:00Z\n"
            "last checkpoint  -\n"
            "particles        1000 accepted, 7 rejected, 12 unclassified\n"
            "files            40 done, 1 quarantined\n"
            "backlog          2 files, 300 records\n"
            "last error       none\n");
}

TEST(FormatClusters, ShowsCentreAndStateAndHandlesEmpty) {
  nlohmann::json clusters = {{"clusters",
                              {{{"id", 3},
                                {"label", "ciliates"},
                                {"count", 120},
                                {"centre", {{"esd_um", 12.5}, {"aspect", 0.8}}},
                                {"spread", 0.9},
                                {"born_time", "2025-12-02T00:00:00Z"},
                                {"retired", false}},
                               {{"id", 4},
                                {"label", ""},
                                {"count", 7},
                                {"centre", nlohmann::json::object()},
                                {"spread", 1.25},
                                {"born_time", "2025-12-02T00:01:00Z"},
                                {"retired", true}}}}};
  EXPECT_EQ(
      FormatClusters(clusters),
      "id  label         count  spread  born (UTC)            state    centre (input units)\n"
      " 3  ciliates        120     0.9  2025-12-02T00:00:00Z  active   aspect=0.8 esd_um=12.5\n"
      " 4  (unlabelled)      7    1.25  2025-12-02T00:01:00Z  retired  -\n");
  EXPECT_EQ(FormatClusters({{"clusters", nlohmann::json::array()}}),
            "no clusters yet (the model is still warming up)\n");
}

TEST(FormatAlerts, ListsActiveWithAdviceAndRecent) {
  nlohmann::json alert = {
      {"sequence", 12},
      {"event", "raised"},
      {"kind", "composition"},
      {"severity", "alarm"},
      {"time", "2025-12-02T01:00:00Z"},
      {"since", "2025-12-02T00:40:00Z"},
      {"clusters", {{{"id", 3}, {"label", "ciliates"}}, {{"id", 5}, {"label", ""}}}},
      {"message", "cluster 3 doubled"},
      {"what_to_check", "look at a few images"}};
  std::string text = FormatAlerts({{"active", {alert}}, {"recent", nlohmann::json::array()}});
  EXPECT_EQ(text,
            "active alerts: 1\n"
            " #  severity  kind         since (UTC)           raised (UTC)          clusters"
            "         message\n"
            "12  alarm     composition  2025-12-02T00:40:00Z  2025-12-02T01:00:00Z  "
            "3 (ciliates), 5  cluster 3 doubled\n"
            "  #12 check: look at a few images\n"
            "\n"
            "recently resolved: 0\n");
}

TEST(FormatAlerts, ToleratesMissingFields) {
  EXPECT_EQ(FormatAlerts(nlohmann::json::object()), "active alerts: 0\n\nrecently resolved: 0\n");
  std::string text = FormatAlerts({{"recent", {{{"kind", "novelty"}}}}});
  EXPECT_NE(text.find("recently resolved: 1\n"), std::string::npos);
  EXPECT_NE(text.find("-  -         novelty  -"), std::string::npos) << text;
}

}  // namespace
}  // namespace seston::ctl
