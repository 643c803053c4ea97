// Where test data lives, and scratch directories removed when a test ends.
#pragma once

#include <filesystem>
#include <string_view>

namespace seston::testing {

// tests/data/<name> in the source tree.
std::filesystem::path TestDataPath(std::string_view name);

class ScratchDirectory {
 public:
  ScratchDirectory();
  ~ScratchDirectory();
  ScratchDirectory(const ScratchDirectory&) = delete;
  ScratchDirectory& operator=(const ScratchDirectory&) = delete;
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path path_;
};

}  // namespace seston::testing
