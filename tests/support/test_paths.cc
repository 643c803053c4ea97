#include "support/test_paths.h"

#include <atomic>
#include <random>
#include <unistd.h>

namespace seston::testing {

std::filesystem::path TestDataPath(std::string_view name) {
  return std::filesystem::path(SESTON_TEST_DATA_DIR_SUPPORT) / std::string(name);
}

ScratchDirectory::ScratchDirectory() {
  static std::atomic<int> counter{0};
  path_ = std::filesystem::temp_directory_path() /
          ("seston-test-" + std::to_string(::getpid()) + "-" + std::to_string(counter++));
  std::filesystem::remove_all(path_);
  std::filesystem::create_directories(path_);
}

ScratchDirectory::~ScratchDirectory() {
  std::error_code ignored;
  std::filesystem::remove_all(path_, ignored);
}

}  // namespace seston::testing
