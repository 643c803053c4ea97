// A main() for the fuzz targets in builds without libFuzzer (gcc, the sanitiser build):
// runs LLVMFuzzerTestOneInput once on every regular file under each directory or file
// named on the command line, so the corpus and every kept crash reproducer are replayed
// by ctest. Prints how many inputs ran; exits 1 when an argument cannot be read (a
// broken invariant or a sanitiser report aborts on its own).
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
#include <string>
#include <vector>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size);

namespace {

bool RunFile(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    std::cerr << "cannot read " << path << "\n";
    return false;
  }
  const std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  // A copy in its own allocation, so that ASan sees a read past the end of the input.
  const std::vector<std::uint8_t> input(bytes.begin(), bytes.end());
  LLVMFuzzerTestOneInput(input.data(), input.size());
  return true;
}

}  // namespace

int main(int argc, char** argv) {
  std::size_t inputs = 0;
  for (int i = 1; i < argc; ++i) {
    const std::filesystem::path argument = argv[i];
    std::error_code error;
    if (std::filesystem::is_regular_file(argument, error)) {
      if (!RunFile(argument)) return 1;
      ++inputs;
      continue;
    }
    if (!std::filesystem::is_directory(argument, error)) {
      std::cerr << "not a file or directory: " << argument << "\n";
      return 1;
    }
    std::vector<std::filesystem::path> files;
    for (const auto& entry : std::filesystem::recursive_directory_iterator(argument)) {
      if (entry.is_regular_file() && entry.path().filename() != "README.md") {
        files.push_back(entry.path());
      }
    }
    std::sort(files.begin(), files.end());
    for (const auto& file : files) {
      if (!RunFile(file)) return 1;
      ++inputs;
    }
  }
  std::cout << "ran " << inputs << " inputs\n";
  return 0;
}
