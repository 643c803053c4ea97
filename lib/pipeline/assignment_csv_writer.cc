#include "pipeline/assignment_csv_writer.h"

#include <cerrno>
#include <charconv>
#include <cstring>

namespace seston {
namespace {

constexpr std::size_t kBufferBytes = 1 << 20;

std::string QuoteCsvField(std::string_view field) {
  if (field.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(field);
  std::string quoted = "\"";
  for (char c : field) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  quoted += '"';
  return quoted;
}

}  // namespace

Result<std::unique_ptr<AssignmentCsvWriter>> AssignmentCsvWriter::Create(
    const std::filesystem::path& path) {
  std::FILE* file = std::fopen(path.c_str(), "w");
  if (file == nullptr) {
    return Status::IoError("cannot open " + path.string() + " for writing: " +
                           std::strerror(errno));
  }
  auto writer = std::unique_ptr<AssignmentCsvWriter>(new AssignmentCsvWriter(file, path));
  std::fputs("file,line,cluster_id,distance\n", file);
  return writer;
}

AssignmentCsvWriter::AssignmentCsvWriter(std::FILE* file, std::filesystem::path path)
    : file_(file), path_(std::move(path)), buffer_(new char[kBufferBytes]) {
  std::setvbuf(file_, buffer_.get(), _IOFBF, kBufferBytes);
}

AssignmentCsvWriter::~AssignmentCsvWriter() { (void)Close(); }

void AssignmentCsvWriter::Assigned(std::string_view source, std::uint64_t line,
                                   std::uint32_t cluster_id, double distance) {
  if (file_ == nullptr) return;
  if (source != last_source_) {
    last_source_ = std::string(source);
    quoted_source_ = QuoteCsvField(source);
  }
  // std::to_chars: shortest round-trip text without locale or allocation.
  char row[96];
  char* const limit = row + sizeof row - 1;  // one byte kept for the newline
  char* end = row;
  *end++ = ',';
  end = std::to_chars(end, limit, line).ptr;
  *end++ = ',';
  end = std::to_chars(end, limit, cluster_id).ptr;
  *end++ = ',';
  end = std::to_chars(end, limit, distance, std::chars_format::general, 8).ptr;
  *end++ = '\n';
  std::fwrite(quoted_source_.data(), 1, quoted_source_.size(), file_);
  std::fwrite(row, 1, static_cast<std::size_t>(end - row), file_);
}

Status AssignmentCsvWriter::Close() {
  if (file_ == nullptr) return Status::Ok();
  bool failed = std::ferror(file_) != 0;
  failed |= std::fclose(file_) != 0;
  file_ = nullptr;
  if (failed) return Status::IoError("cannot write " + path_.string() + ": " + std::strerror(errno));
  return Status::Ok();
}

}  // namespace seston
