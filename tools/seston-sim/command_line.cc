#include "seston-sim/command_line.h"

#include <charconv>
#include <cmath>
#include <functional>
#include <map>
#include <optional>

#include "base/time_format.h"
#include "seston-sim/socket_sender.h"

namespace seston::sim {
namespace {

Result<double> ParseNumber(const std::string& name, const std::string& text,
                           std::string_view what) {
  double value = 0;
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size() || !std::isfinite(value)) {
    return Status::InvalidArgument("--" + name + " must be " + std::string(what) + ", got \"" +
                                   text + "\"");
  }
  return value;
}

Result<std::uint64_t> ParseCount(const std::string& name, const std::string& text,
                                 std::string_view what) {
  std::uint64_t value = 0;
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size()) {
    return Status::InvalidArgument("--" + name + " must be " + std::string(what) + ", got \"" +
                                   text + "\"");
  }
  return value;
}

// A number that must be > 0 (or >= 0 when `zero_ok`).
Result<double> ParseAmount(const std::string& name, const std::string& text, std::string_view what,
                           bool zero_ok = false) {
  SESTON_ASSIGN_OR_RETURN(double value, ParseNumber(name, text, what));
  if (value < 0 || (value == 0 && !zero_ok)) {
    return Status::InvalidArgument("--" + name + " must be " + std::string(what) + ", got \"" +
                                   text + "\"");
  }
  return value;
}

std::string ScenarioList() {
  std::string list;
  for (Scenario scenario : AllScenarios()) {
    if (!list.empty()) list += "|";
    list += ScenarioName(scenario);
  }
  return list;
}

}  // namespace

Result<CommandLine> ParseCommandLine(const std::vector<std::string>& args) {
  CommandLine line;
  SimulatorOptions& sim = line.simulator;
  bool samples_given = false;
  bool slow_seconds_given = false;
  using Setter = std::function<Status(const std::string& name, const std::string& value)>;
  auto assign = [](auto& field, auto parsed) -> Status {
    if (!parsed.ok()) return parsed.status();
    field = *parsed;
    return Status::Ok();
  };
  const std::map<std::string, Setter> valued = {
      {"out",
       [&](auto&, auto& v) {
         line.out_dir = v;
         return Status::Ok();
       }},
      {"samples",
       [&](auto& n, auto& v) {
         samples_given = true;
         return assign(line.samples, ParseCount(n, v, "a whole number of samples"));
       }},
      {"start",
       [&](auto& n, auto& v) {
         std::optional<double> t = ParseEventTime(v);
         if (!t) {
           return Status::InvalidArgument("--" + n +
                                          " must be an ISO 8601 UTC time such as "
                                          "2026-06-01T00:00:00Z, got \"" +
                                          v + "\"");
         }
         sim.start_seconds = *t;
         return Status::Ok();
       }},
      {"seed",
       [&](auto& n, auto& v) {
         return assign(sim.seed, ParseCount(n, v, "a whole number 0..18446744073709551615"));
       }},
      {"scenario",
       [&](auto& n, auto& v) {
         std::optional<Scenario> s = ParseScenario(v);
         if (!s) {
           return Status::InvalidArgument("--" + n + " must be one of " + ScenarioList() +
                                          ", got \"" + v + "\"");
         }
         sim.scenario.scenario = *s;
         return Status::Ok();
       }},
      {"change-at",
       [&](auto& n, auto& v) {
         return assign(sim.scenario.change_at_hours,
                       ParseAmount(n, v, "a number of hours >= 0", true));
       }},
      {"ramp",
       [&](auto& n, auto& v) {
         SESTON_ASSIGN_OR_RETURN(double hours, ParseAmount(n, v, "a number of hours >= 0", true));
         sim.scenario.ramp_hours = hours;
         return Status::Ok();
       }},
      {"sample-interval",
       [&](auto& n, auto& v) {
         return assign(sim.sample_interval_seconds, ParseAmount(n, v, "a number of seconds > 0"));
       }},
      {"acquisition",
       [&](auto& n, auto& v) {
         return assign(sim.acquisition_seconds, ParseAmount(n, v, "a number of seconds > 0"));
       }},
      {"volume",
       [&](auto& n, auto& v) {
         return assign(sim.nominal_volume_ml, ParseAmount(n, v, "a number of mL > 0"));
       }},
      {"concentration-scale",
       [&](auto& n, auto& v) {
         return assign(sim.concentration_scale, ParseAmount(n, v, "a number > 0"));
       }},
      {"station",
       [&](auto&, auto& v) {
         sim.station_slug = v;
         return Status::Ok();
       }},
      {"first-sample",
       [&](auto& n, auto& v) {
         return assign(sim.first_sample_number, ParseCount(n, v, "a whole number"));
       }},
      {"speed",
       [&](auto& n, auto& v) {
         return assign(line.speed,
                       ParseAmount(n, v, "a number of event seconds per wall second > 0"));
       }},
      {"slow-write-seconds",
       [&](auto& n, auto& v) {
         slow_seconds_given = true;
         return assign(line.slow_write_seconds, ParseAmount(n, v, "a number of seconds > 0"));
       }},
      {"socket",
       [&](auto&, auto& v) {
         line.socket = v;
         return Status::Ok();
       }},
  };
  const std::map<std::string, bool*> flags = {{"truth", &line.truth},
                                              {"live", &line.live},
                                              {"slow-write", &line.slow_write},
                                              {"help", &line.help}};

  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& arg = args[i];
    if (arg == "-h") {
      line.help = true;
      continue;
    }
    if (arg.rfind("--", 0) != 0 || arg.size() == 2) {
      return Status::InvalidArgument("unexpected argument \"" + arg +
                                     "\"; options start with -- (see --help)");
    }
    std::string name = arg.substr(2);
    std::optional<std::string> value;
    if (std::size_t equals = name.find('='); equals != std::string::npos) {
      value = name.substr(equals + 1);
      name.resize(equals);
    }
    if (auto flag = flags.find(name); flag != flags.end()) {
      if (value) return Status::InvalidArgument("--" + name + " takes no value");
      *flag->second = true;
      continue;
    }
    auto setter = valued.find(name);
    if (setter == valued.end()) {
      return Status::InvalidArgument("unknown option --" + name + " (see --help)");
    }
    if (!value) {
      if (i + 1 >= args.size()) return Status::InvalidArgument("--" + name + " needs a value");
      value = args[++i];
    }
    SESTON_RETURN_IF_ERROR(setter->second(name, *value));
  }
  if (line.help) return line;

  if (line.socket.empty() && line.out_dir.empty()) {
    return Status::InvalidArgument("--out DIR is required (or --live --socket HOST:PORT)");
  }
  if (!line.socket.empty()) {
    if (!line.live) return Status::InvalidArgument("--socket needs --live");
    if (!line.out_dir.empty())
      return Status::InvalidArgument("--socket and --out exclude each other");
    if (line.slow_write)
      return Status::InvalidArgument("--slow-write applies to files, not --socket");
  }
  if (!line.live) {
    if (!samples_given || line.samples == 0) {
      return Status::InvalidArgument("batch mode needs --samples N with N >= 1");
    }
    if (line.slow_write || slow_seconds_given) {
      return Status::InvalidArgument("--slow-write and --slow-write-seconds need --live");
    }
  }
  if (slow_seconds_given && !line.slow_write) {
    return Status::InvalidArgument("--slow-write-seconds needs --slow-write");
  }
  // Options that only make sense together are checked here, so they too exit with 2.
  if (!line.socket.empty()) SESTON_RETURN_IF_ERROR(SplitHostPort(line.socket).status());
  SESTON_RETURN_IF_ERROR(SampleGenerator::Create(line.simulator).status());
  return line;
}

std::string UsageText() {
  return "seston-sim: a simulated imaging flow instrument at the fictional station\n"
         "\"Skerry Sound mooring B\". Writes one CSV file of particles per sample, or streams\n"
         "them as NDJSON over TCP. Event times come from a simulated clock only.\n"
         "\n"
         "Usage:\n"
         "  seston-sim --out DIR --samples N [options]            batch: as fast as possible\n"
         "  seston-sim --live --out DIR [--samples N] [options]   live: files in real time\n"
         "  seston-sim --live --socket HOST:PORT [options]        live: NDJSON over TCP\n"
         "\n"
         "Output:\n"
         "  --out DIR                 directory for sample files (created when missing)\n"
         "  --samples N               number of samples; required in batch mode;\n"
         "                            live default 0 = run until interrupted\n"
         "  --truth                   add a 'group' column with the generating group (off)\n"
         "  --station SLUG            file name prefix, a-z 0-9 '-' (default skerry-sound-b)\n"
         "  --first-sample N          number of the first sample id, S<N> (default 1)\n"
         "\n"
         "Simulated clock and sampling:\n"
         "  --start TIME              event time of the first sample, ISO 8601 UTC\n"
         "                            (default 2026-06-01T00:00:00Z)\n"
         "  --sample-interval SEC     event seconds between sample starts (default 300)\n"
         "  --acquisition SEC         event seconds one sample takes, <= interval (default 120)\n"
         "  --volume ML               nominal analysed volume per sample, mL (default 5;\n"
         "                            each sample varies with a 2 % sd)\n"
         "  --concentration-scale X   multiply every group's concentration (default 1;\n"
         "                            about 860 particles per 5 mL sample at 1)\n"
         "  --seed S                  random seed, whole number (default 1); the same seed\n"
         "                            and options give byte-identical files\n"
         "\n"
         "Scenario:\n"
         "  --scenario NAME           steady|bloom|new-group|focus-drift|flow-drop (default "
         "steady)\n"
         "                            steady       nothing changes\n"
         "                            bloom        'chain-forming diatoms' rise 6-fold\n"
         "                            new-group    'spiny colonies' appear, 0 -> 8 per mL\n"
         "                            focus-drift  diameters shrink 25 %, grey levels +40\n"
         "                            flow-drop    analysed volume falls to 40 %, counts fall\n"
         "  --change-at HOURS         event hours after the start when the change begins\n"
         "                            (default 6)\n"
         "  --ramp HOURS              hours over which the change ramps in linearly (default\n"
         "                            bloom 3, new-group 2, focus-drift 12, flow-drop 1)\n"
         "\n"
         "Live mode:\n"
         "  --live                    write each sample when the simulated clock reaches its\n"
         "                            end (off: batch mode)\n"
         "  --speed X                 event seconds per wall second (default 1; 60 makes a\n"
         "                            300 s interval take 5 s)\n"
         "  --slow-write              write each file under its final name in 6 pieces\n"
         "                            (default: write .<name>.part, then rename it in)\n"
         "  --slow-write-seconds SEC  wall seconds one slow write takes (default 3)\n"
         "  --socket HOST:PORT        send NDJSON records over TCP instead of files; each\n"
         "                            sample ends with {\"close_sample\":ID,\"volume_ml\":V};\n"
         "                            lines the server sends back are printed\n"
         "\n"
         "  --help, -h                print this text\n"
         "\n"
         "Exit codes: 0 done, 1 a run-time failure (disk, network), 2 a bad option.\n";
}

}  // namespace seston::sim
