// Reading sestond's YAML configuration into a Config.
//
// The file is one YAML mapping whose sections mirror the Options structs (see
// config/seston.example.yaml in the source tree for every key, its unit and default).
// Every key is checked: an unknown key, a value of the wrong type, a value out of range,
// a duplicate key or a YAML syntax error is a ConfigProblem naming the file, the line and
// the dotted key (`model.k`), what was found and what would be accepted. All problems
// are collected, not just the first, so an operator can fix a file in one pass.
//
// Defaults are the Options structs' own: a key left out keeps its struct default. The
// one required key is `features` (at least one feature).
//
// Paths: drop_dir, done_dir, quarantine_dir, input.socket.unix_path, counts.output_dir,
// alerts.dir, state.dir and api.token_file may be relative; they are resolved against
// the directory of the config file (not the working directory), so a config and its
// ./var/ tree can move together and `sestond run --config x.yaml` works from any cwd.
// In a loaded Config every one of these paths is absolute and lexically normal. When
// done_dir or quarantine_dir is left out it is <drop_dir>/done or <drop_dir>/quarantine.
// alerts.hook_command is a command line, not a path, and is passed on as written.
//
// Thread safety: free functions without shared state; call from any thread.
#pragma once

#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "base/file_system.h"
#include "base/status.h"
#include "config/config.h"

namespace seston {

// One thing wrong with a config file.
struct ConfigProblem {
  std::string file;     // the source name: the path as given, or ParseConfig's name
  int line = 0;         // 1-based; 0 when the problem has no place in the file
  int column = 0;       // 1-based; 0 when unknown
  std::string key;      // dotted path, e.g. "model.k" or "features[2].column"; "" for syntax
  std::string message;  // a full sentence starting with the key, e.g.
                        // `model.k must be an integer from 2 to 256, got "six"`

  // `config.yaml:14: model.k must be ...`, or `config.yaml: ...` when line is 0.
  std::string ToString() const;
};

// Checks `yaml_text` and returns every problem found, in file order (syntax errors stop
// the check, since nothing after them can be read). When `config` is given it receives
// the values that could be read, over the defaults, with paths resolved against the
// directory of `source_name` (made absolute against the working directory).
std::vector<ConfigProblem> CheckConfig(std::string_view yaml_text, const std::string& source_name,
                                       Config* config = nullptr);

// As CheckConfig, reading the file at `path` through `fs` (at most 1 MiB). A file that
// cannot be read is one problem with line 0.
std::vector<ConfigProblem> CheckConfigFile(FileSystem& fs, const std::filesystem::path& path,
                                           Config* config = nullptr);

// The Config in `yaml_text`, or kInvalidArgument whose message is every problem's
// ToString(), one per line. Relative paths are resolved as for CheckConfig.
Result<Config> ParseConfig(std::string_view yaml_text, std::string source_name);

// Reads and parses the file at `path`; Config::source_path is its absolute path. A file
// that cannot be read keeps the file system's status code, with the path in the message.
Result<Config> LoadConfig(FileSystem& fs, const std::filesystem::path& path);
// The same through PosixFileSystem::Instance().
Result<Config> LoadConfig(const std::filesystem::path& path);

}  // namespace seston
