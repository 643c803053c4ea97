#include "seston-sim/sample_generator.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <numbers>

#include "base/time_format.h"
#include "seston-sim/random_source.h"

namespace seston::sim {
namespace {

double RoundTo(double value, int decimals) {
  double scale = std::pow(10.0, decimals);
  return std::round(value * scale) / scale;
}

void AppendFixed(std::string& out, double value, int decimals) {
  char text[64];
  auto result = std::to_chars(text, text + sizeof text, value, std::chars_format::fixed, decimals);
  out.append(text, result.ptr);
}

double Logit(double p) { return std::log(p / (1.0 - p)); }
double Logistic(double x) { return 1.0 / (1.0 + std::exp(-x)); }

// Ramanujan's first approximation to the perimeter of an ellipse with semi-axes a, b.
double EllipsePerimeter(double a, double b) {
  return std::numbers::pi * (3.0 * (a + b) - std::sqrt((3.0 * a + b) * (a + 3.0 * b)));
}

SimulatedParticle DrawParticle(const ParticleGroup& group, std::size_t group_index,
                               const Conditions& conditions, RandomSource& random) {
  SimulatedParticle p;
  p.group = group_index;
  double diameter = std::exp(std::log(group.median_esd_um) + group.esd_log_sd * random.Normal()) *
                    conditions.esd_scale;
  double aspect =
      Logistic(Logit(group.median_aspect_ratio) + group.aspect_logit_sd * random.Normal());
  p.aspect_ratio = std::clamp(RoundTo(aspect, 4), 0.0001, 1.0);
  p.area_um2 = std::max(0.01, RoundTo(std::numbers::pi * diameter * diameter / 4.0, 2));
  p.esd_um = RoundTo(2.0 * std::sqrt(p.area_um2 / std::numbers::pi), 3);
  double major = std::sqrt(p.area_um2 / (std::numbers::pi * p.aspect_ratio));
  double minor = p.aspect_ratio * major;
  double roughness = std::exp(group.perimeter_roughness * std::abs(random.Normal()));
  // Rounded up so the isoperimetric bound P >= 2·sqrt(π·A) survives the rounding.
  p.perimeter_um = std::ceil(EllipsePerimeter(major, minor) * roughness * 100.0) / 100.0;
  double grey = group.grey_mean + conditions.grey_shift + group.grey_sd * random.Normal();
  p.grey_level = static_cast<int>(std::clamp(std::round(grey), 0.0, 255.0));
  return p;
}

const char* const kColumns[] = {"time",   "sample",       "volume_ml",    "area_um2",
                                "esd_um", "aspect_ratio", "perimeter_um", "grey_level"};

}  // namespace

Result<SampleGenerator> SampleGenerator::Create(SimulatorOptions options) {
  const auto& slug = options.station_slug;
  if (slug.empty() || !std::all_of(slug.begin(), slug.end(), [](char c) {
        return (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '-';
      })) {
    return Status::InvalidArgument("station must be a non-empty slug of a-z, 0-9 and '-', got \"" +
                                   slug + "\"");
  }
  auto positive = [](double v) { return std::isfinite(v) && v > 0; };
  if (!std::isfinite(options.start_seconds) || options.start_seconds < 0) {
    return Status::InvalidArgument("start must be a time at or after 1970-01-01T00:00:00Z");
  }
  if (!positive(options.sample_interval_seconds)) {
    return Status::InvalidArgument("sample-interval must be a number of seconds > 0");
  }
  if (!positive(options.acquisition_seconds) ||
      options.acquisition_seconds > options.sample_interval_seconds) {
    return Status::InvalidArgument(
        "acquisition must be a number of seconds > 0 and not longer than the sample interval");
  }
  if (!positive(options.nominal_volume_ml)) {
    return Status::InvalidArgument("volume must be a number of mL > 0");
  }
  if (!std::isfinite(options.volume_noise) || options.volume_noise < 0 ||
      options.volume_noise > 0.3) {
    return Status::InvalidArgument("volume noise must be a relative sd from 0 to 0.3");
  }
  if (!positive(options.concentration_scale)) {
    return Status::InvalidArgument("concentration-scale must be a number > 0");
  }
  if (options.groups.empty()) return Status::InvalidArgument("no particle groups given");
  for (const ParticleGroup& g : options.groups) {
    bool valid = !g.name.empty() && g.name.find(',') == std::string::npos &&
                 positive(g.median_esd_um) && g.esd_log_sd >= 0 && g.median_aspect_ratio > 0 &&
                 g.median_aspect_ratio < 1 && g.aspect_logit_sd >= 0 && g.grey_sd >= 0 &&
                 g.perimeter_roughness >= 0 && g.concentration_per_ml >= 0;
    if (!valid) {
      return Status::InvalidArgument("particle group \"" + g.name +
                                     "\" has a parameter out of range (see station_model.h)");
    }
  }
  SESTON_ASSIGN_OR_RETURN(ScenarioModel scenario,
                          ScenarioModel::Create(options.scenario, options.groups));
  return SampleGenerator(std::move(options), std::move(scenario));
}

std::string SampleGenerator::SampleId(std::uint64_t index) const {
  char text[32];
  std::snprintf(text, sizeof text, "S%06llu",
                static_cast<unsigned long long>(options_.first_sample_number + index));
  return text;
}

double SampleGenerator::SampleStart(std::uint64_t index) const {
  return options_.start_seconds + static_cast<double>(index) * options_.sample_interval_seconds;
}

SimulatedSample SampleGenerator::Generate(std::uint64_t index) const {
  RandomSource random(RandomSource::DeriveSeed(options_.seed, index));
  SimulatedSample sample;
  sample.index = index;
  sample.id = SampleId(index);
  sample.start_seconds = SampleStart(index);
  sample.file_name =
      options_.station_slug + "_" + FormatCompact(sample.start_seconds) + "_" + sample.id + ".csv";

  double hours = (sample.start_seconds - options_.start_seconds) / 3600.0;
  Conditions conditions = scenario_.At(hours);
  double noise = std::clamp(random.Normal(), -3.0, 3.0) * options_.volume_noise;
  sample.volume_ml =
      RoundTo(options_.nominal_volume_ml * conditions.volume_fraction * (1.0 + noise), 3);

  std::vector<std::uint64_t> counts;
  for (double per_ml : conditions.concentration_per_ml) {
    counts.push_back(random.Poisson(per_ml * options_.concentration_scale * sample.volume_ml));
  }
  for (std::size_t g = 0; g < counts.size(); ++g) {
    for (std::uint64_t i = 0; i < counts[g]; ++i) {
      SimulatedParticle particle = DrawParticle(options_.groups[g], g, conditions, random);
      double offset_ms = std::floor(random.Uniform() * options_.acquisition_seconds * 1000.0);
      particle.time_seconds = sample.start_seconds + offset_ms / 1000.0;
      sample.particles.push_back(particle);
    }
  }
  std::stable_sort(sample.particles.begin(), sample.particles.end(),
                   [](const SimulatedParticle& a, const SimulatedParticle& b) {
                     return a.time_seconds < b.time_seconds;
                   });
  return sample;
}

std::optional<std::uint64_t> SampleGenerator::ChangeSampleIndex() const {
  if (scenario_.scenario() == Scenario::kSteady) return std::nullopt;
  double seconds = scenario_.change_at_hours() * 3600.0;
  return static_cast<std::uint64_t>(std::ceil(seconds / options_.sample_interval_seconds));
}

std::string SampleGenerator::ChangeNotice() const {
  std::optional<std::uint64_t> index = ChangeSampleIndex();
  if (!index) return "";
  return "scenario " + std::string(ScenarioName(scenario_.scenario())) + " begins at " +
         FormatIso8601(SampleStart(*index)) + " (sample " + SampleId(*index) +
         "): " + scenario_.DescribeChange();
}

std::string FormatCsv(const SimulatedSample& sample, const std::vector<ParticleGroup>& groups,
                      bool truth) {
  std::string out;
  out.reserve(96 * (sample.particles.size() + 1));
  for (const char* column : kColumns) {
    if (column != kColumns[0]) out += ',';
    out += column;
  }
  out += truth ? ",group\n" : "\n";
  for (const SimulatedParticle& p : sample.particles) {
    out += FormatIso8601(p.time_seconds, true);
    out += ',';
    out += sample.id;
    out += ',';
    AppendFixed(out, sample.volume_ml, 3);
    out += ',';
    AppendFixed(out, p.area_um2, 2);
    out += ',';
    AppendFixed(out, p.esd_um, 3);
    out += ',';
    AppendFixed(out, p.aspect_ratio, 4);
    out += ',';
    AppendFixed(out, p.perimeter_um, 2);
    out += ',';
    out += std::to_string(p.grey_level);
    if (truth) {
      out += ',';
      out += groups[p.group].name;
    }
    out += '\n';
  }
  return out;
}

std::string FormatNdjson(const SimulatedSample& sample, const std::vector<ParticleGroup>& groups,
                         bool truth) {
  std::string out;
  for (const SimulatedParticle& p : sample.particles) {
    nlohmann::ordered_json record;
    record[kColumns[0]] = FormatIso8601(p.time_seconds, true);
    record[kColumns[1]] = sample.id;
    record[kColumns[2]] = sample.volume_ml;
    record[kColumns[3]] = p.area_um2;
    record[kColumns[4]] = p.esd_um;
    record[kColumns[5]] = p.aspect_ratio;
    record[kColumns[6]] = p.perimeter_um;
    record[kColumns[7]] = p.grey_level;
    if (truth) record["group"] = groups[p.group].name;
    out += record.dump();
    out += '\n';
  }
  nlohmann::ordered_json close;
  close["close_sample"] = sample.id;
  close["volume_ml"] = sample.volume_ml;
  out += close.dump();
  out += '\n';
  return out;
}

}  // namespace seston::sim
