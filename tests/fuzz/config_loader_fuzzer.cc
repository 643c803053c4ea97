// Fuzz target: CheckConfig on arbitrary YAML text.
//
// Beyond "no crash, no sanitiser report" (yaml-cpp's exceptions must all be caught at
// the edge), it checks that asking for the Config does not change the verdict, that
// every problem can be shown, and that a text with no problems gives what
// config_loader.h promises: at least one feature, and every path absolute and
// lexically normal.
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <string>
#include <string_view>

#include "config/config_loader.h"
#include "fuzz/fuzz_check.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  const std::string source = "/etc/seston/config.yaml";

  seston::Config config;
  const std::vector<seston::ConfigProblem> problems = seston::CheckConfig(text, source, &config);
  const std::vector<seston::ConfigProblem> again = seston::CheckConfig(text, source);
  FUZZ_CHECK(problems.size() == again.size());
  for (const seston::ConfigProblem& problem : problems) {
    FUZZ_CHECK(!problem.message.empty());
    FUZZ_CHECK(problem.ToString().find(problem.message) != std::string::npos);
  }
  if (!problems.empty()) return 0;

  FUZZ_CHECK(!config.features.features.empty());
  for (const std::string* path :
       {&config.input.drop_dir, &config.input.done_dir, &config.input.quarantine_dir,
        &config.counts.output_dir, &config.alerts.dir, &config.state.dir}) {
    const std::filesystem::path given(*path);
    FUZZ_CHECK(given.is_absolute());
    FUZZ_CHECK(given == given.lexically_normal());
  }
  return 0;
}
