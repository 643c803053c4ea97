// seston-read-lines: the read-and-split ceiling for replay. Reads every file named on the
// command line the way replay does (whole, through PosixFileSystem::ReadFile) and splits
// it into lines (memchr for '\n'), touching every byte once, and nothing else. Prints
// files, lines, bytes and seconds. No parsing: no replay can be faster than this.
#include <chrono>
#include <cstdio>
#include <cstring>
#include <string>

#include "base/file_system.h"

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: seston-read-lines FILE...\n");
    return 2;
  }
  const auto start = std::chrono::steady_clock::now();
  unsigned long long lines = 0, bytes = 0, line_bytes = 0;
  for (int i = 1; i < argc; ++i) {
    auto data = seston::PosixFileSystem::Instance().ReadFile(argv[i], 1ull << 30);
    if (!data.ok()) {
      std::fprintf(stderr, "seston-read-lines: %s\n", data.status().message().c_str());
      return 1;
    }
    bytes += data->size();
    const char* at = data->data();
    const char* const end = at + data->size();
    while (at < end) {
      const void* newline = std::memchr(at, '\n', static_cast<std::size_t>(end - at));
      const char* line_end = newline != nullptr ? static_cast<const char*>(newline) : end;
      line_bytes += static_cast<unsigned long long>(line_end - at);  // keeps the split live
      ++lines;
      at = line_end + 1;
    }
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("files %d lines %llu bytes %llu line_bytes %llu seconds %.6f\n", argc - 1, lines,
              bytes, line_bytes, seconds);
  return 0;
}
