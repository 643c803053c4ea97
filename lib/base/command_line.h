// CommandLine: the small argument parser shared by sestond, sestonctl and seston-sim.
//
// Hand-written rather than Boost.Program_options because Debian ships that library as a
// separate compiled package we do not otherwise need, and our needs are small: long
// options ("--name VALUE", "--name=VALUE", flags), positional arguments, generated --help
// text with units and defaults, and errors that say what was wrong and what is accepted.
//
// Usage:
//   CommandLine cli("seston-sim", "Writes simulated sample files.");
//   cli.AddOption("samples", "N", "number of sample files to write", "12");
//   cli.AddFlag("live", "write in real time");
//   Status s = cli.Parse(argc - 1, argv + 1);      // everything after the program name
//   if (cli.help_requested()) { std::cout << cli.Help(); return 0; }
//   if (!s.ok()) { std::cerr << s.message() << "\n" << cli.Usage(); return 2; }
//   auto n = cli.GetInt("samples");                 // Result<long long>
//
// Thread safety: single-threaded use at start-up.
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"

namespace seston {

class CommandLine {
 public:
  CommandLine(std::string program, std::string summary);

  // An option taking a value. `value_name` appears in help ("--window SECONDS");
  // `default_value` "" means no default (the option is then optional and unset).
  void AddOption(std::string name, std::string value_name, std::string help,
                 std::string default_value = "");
  // An option that may be given several times (each value kept in order).
  void AddRepeatedOption(std::string name, std::string value_name, std::string help);
  void AddFlag(std::string name, std::string help);
  // Named positional arguments, for help text; `variadic` takes the rest.
  void AddPositional(std::string name, std::string help, bool variadic = false);

  // Parses args (without the program name). "--help"/"-h" anywhere sets help_requested().
  // "--" ends options. Unknown options are an error naming the closest known one.
  Status Parse(int argc, const char* const* argv);
  Status Parse(const std::vector<std::string>& args);

  bool help_requested() const { return help_requested_; }
  bool Has(std::string_view name) const;  // given on the command line, or has a default
  bool Flag(std::string_view name) const;
  std::optional<std::string> Get(std::string_view name) const;
  std::vector<std::string> GetAll(std::string_view name) const;
  // Typed access with an error naming the option and what is accepted.
  Result<long long> GetInt(std::string_view name, long long min, long long max) const;
  Result<double> GetDouble(std::string_view name, double min, double max) const;
  const std::vector<std::string>& positionals() const { return positionals_; }

  std::string Usage() const;  // one line
  std::string Help() const;   // usage, summary, every option with default

 private:
  struct Spec {
    std::string name, value_name, help, default_value;
    bool flag = false;
    bool repeated = false;
  };
  struct PositionalSpec {
    std::string name, help;
    bool variadic = false;
  };
  const Spec* Find(std::string_view name) const;

  std::string program_, summary_;
  std::vector<Spec> specs_;
  std::vector<PositionalSpec> positional_specs_;
  std::map<std::string, std::vector<std::string>, std::less<>> values_;
  std::vector<std::string> positionals_;
  bool help_requested_ = false;
};

// Levenshtein distance, for "did you mean" hints in command-line and config errors.
std::size_t EditDistance(std::string_view a, std::string_view b);

}  // namespace seston
