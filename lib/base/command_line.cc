#include "base/command_line.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <numeric>
#include <sstream>

namespace seston {

CommandLine::CommandLine(std::string program, std::string summary)
    : program_(std::move(program)), summary_(std::move(summary)) {}

void CommandLine::AddOption(std::string name, std::string value_name, std::string help,
                            std::string default_value) {
  specs_.push_back({std::move(name), std::move(value_name), std::move(help),
                    std::move(default_value), false, false});
}

void CommandLine::AddRepeatedOption(std::string name, std::string value_name, std::string help) {
  specs_.push_back({std::move(name), std::move(value_name), std::move(help), "", false, true});
}

void CommandLine::AddFlag(std::string name, std::string help) {
  specs_.push_back({std::move(name), "", std::move(help), "", true, false});
}

void CommandLine::AddPositional(std::string name, std::string help, bool variadic) {
  positional_specs_.push_back({std::move(name), std::move(help), variadic});
}

const CommandLine::Spec* CommandLine::Find(std::string_view name) const {
  for (const auto& spec : specs_) {
    if (spec.name == name) return &spec;
  }
  return nullptr;
}

Status CommandLine::Parse(int argc, const char* const* argv) {
  std::vector<std::string> args;
  for (int i = 0; i < argc; ++i) args.emplace_back(argv[i]);
  return Parse(args);
}

Status CommandLine::Parse(const std::vector<std::string>& args) {
  bool options_done = false;
  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& arg = args[i];
    if (options_done || arg.size() < 2 || arg[0] != '-') {
      positionals_.push_back(arg);
      continue;
    }
    if (arg == "--") {
      options_done = true;
      continue;
    }
    if (arg == "--help" || arg == "-h") {
      help_requested_ = true;
      continue;
    }
    if (arg.rfind("--", 0) != 0) {
      return Status::InvalidArgument(program_ + ": unknown option " + arg +
                                     " (options are written --name)");
    }
    std::string name = arg.substr(2);
    std::optional<std::string> inline_value;
    if (auto eq = name.find('='); eq != std::string::npos) {
      inline_value = name.substr(eq + 1);
      name = name.substr(0, eq);
    }
    const Spec* spec = Find(name);
    if (spec == nullptr) {
      std::string message = program_ + ": unknown option --" + name;
      const Spec* closest = nullptr;
      std::size_t best = 3;
      for (const auto& candidate : specs_) {
        std::size_t distance = EditDistance(name, candidate.name);
        if (distance < best) {
          best = distance;
          closest = &candidate;
        }
      }
      if (closest != nullptr) message += "; did you mean --" + closest->name + "?";
      return Status::InvalidArgument(message);
    }
    if (spec->flag) {
      if (inline_value) {
        return Status::InvalidArgument(program_ + ": --" + name + " takes no value");
      }
      values_[name] = {"true"};
      continue;
    }
    std::string value;
    if (inline_value) {
      value = *inline_value;
    } else {
      if (i + 1 >= args.size()) {
        return Status::InvalidArgument(program_ + ": --" + name + " needs a value (" +
                                       spec->value_name + ")");
      }
      value = args[++i];
    }
    if (spec->repeated) {
      values_[name].push_back(std::move(value));
    } else {
      values_[name] = {std::move(value)};
    }
  }
  return Status::Ok();
}

bool CommandLine::Has(std::string_view name) const { return Get(name).has_value(); }

bool CommandLine::Flag(std::string_view name) const { return values_.find(name) != values_.end(); }

std::optional<std::string> CommandLine::Get(std::string_view name) const {
  if (auto it = values_.find(name); it != values_.end() && !it->second.empty()) {
    return it->second.back();
  }
  const Spec* spec = Find(name);
  if (spec != nullptr && !spec->default_value.empty()) return spec->default_value;
  return std::nullopt;
}

std::vector<std::string> CommandLine::GetAll(std::string_view name) const {
  if (auto it = values_.find(name); it != values_.end()) return it->second;
  return {};
}

Result<long long> CommandLine::GetInt(std::string_view name, long long min, long long max) const {
  auto text = Get(name);
  std::string range = "an integer from " + std::to_string(min) + " to " + std::to_string(max);
  if (!text) return Status::InvalidArgument(program_ + ": --" + std::string(name) + " is required (" + range + ")");
  long long value = 0;
  auto [end, error] = std::from_chars(text->data(), text->data() + text->size(), value);
  if (error != std::errc() || end != text->data() + text->size() || value < min || value > max) {
    return Status::InvalidArgument(program_ + ": --" + std::string(name) + " must be " + range +
                                   ", got \"" + *text + "\"");
  }
  return value;
}

Result<double> CommandLine::GetDouble(std::string_view name, double min, double max) const {
  auto text = Get(name);
  std::ostringstream range;
  range << "a number from " << min << " to " << max;
  if (!text) return Status::InvalidArgument(program_ + ": --" + std::string(name) + " is required (" + range.str() + ")");
  double value = 0;
  auto [end, error] = std::from_chars(text->data(), text->data() + text->size(), value);
  if (error != std::errc() || end != text->data() + text->size() || !std::isfinite(value) ||
      value < min || value > max) {
    return Status::InvalidArgument(program_ + ": --" + std::string(name) + " must be " +
                                   range.str() + ", got \"" + *text + "\"");
  }
  return value;
}

std::string CommandLine::Usage() const {
  std::string usage = "usage: " + program_;
  if (!specs_.empty()) usage += " [options]";
  for (const auto& positional : positional_specs_) {
    usage += " " + positional.name + (positional.variadic ? "..." : "");
  }
  return usage + "\n";
}

std::string CommandLine::Help() const {
  std::ostringstream out;
  out << Usage() << "\n" << summary_ << "\n";
  if (!positional_specs_.empty()) {
    out << "\narguments:\n";
    for (const auto& positional : positional_specs_) {
      out << "  " << positional.name << (positional.variadic ? "..." : "") << "\n      "
          << positional.help << "\n";
    }
  }
  out << "\noptions:\n";
  for (const auto& spec : specs_) {
    out << "  --" << spec.name;
    if (!spec.flag) out << " " << spec.value_name;
    out << "\n      " << spec.help;
    if (!spec.default_value.empty()) out << " (default " << spec.default_value << ")";
    if (spec.repeated) out << " (may be repeated)";
    out << "\n";
  }
  out << "  --help\n      show this help and exit\n";
  return out.str();
}

std::size_t EditDistance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> previous(b.size() + 1), current(b.size() + 1);
  std::iota(previous.begin(), previous.end(), 0);
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      std::size_t substitute = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitute});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

}  // namespace seston
