// AssignmentCsvWriter: the --assignments output of sestond replay.
//
// One row per accepted particle, `file,line,cluster_id,distance`: the input file as
// given, the 1-based line in it, the cluster id (0 = unclassified) and the distance to
// the nearest centre in z units (standardised features). Fields containing a comma,
// quote or newline are quoted (RFC 4180). Buffered; Close() reports the first write error.
#pragma once

#include <cstdio>
#include <filesystem>
#include <memory>
#include <string>

#include "base/status.h"
#include "pipeline/pipeline.h"

namespace seston {

class AssignmentCsvWriter final : public AssignmentSink {
 public:
  static Result<std::unique_ptr<AssignmentCsvWriter>> Create(const std::filesystem::path& path);
  ~AssignmentCsvWriter() override;

  void Assigned(std::string_view source, std::uint64_t line, std::uint32_t cluster_id,
                double distance) override;
  Status Close();

 private:
  AssignmentCsvWriter(std::FILE* file, std::filesystem::path path);

  std::FILE* file_;
  std::filesystem::path path_;
  std::string last_source_;
  std::string quoted_source_;
  std::unique_ptr<char[]> buffer_;
};

}  // namespace seston
