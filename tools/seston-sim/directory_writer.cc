#include "seston-sim/directory_writer.h"

#include <algorithm>
#include <chrono>
#include <thread>

namespace seston::sim {

Result<DirectoryWriter> DirectoryWriter::Create(FileSystem& fs, std::filesystem::path directory,
                                                DirectoryWriterOptions options) {
  if (options.mode == FileWriteMode::kSlowWrite &&
      (!(options.slow_write_seconds > 0) || options.slow_write_pieces < 2)) {
    return Status::InvalidArgument("slow write needs slow-write-seconds > 0 and at least 2 pieces");
  }
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(directory).WithContext(
      "cannot create output directory " + directory.string()));
  return DirectoryWriter(fs, std::move(directory), options);
}

Status DirectoryWriter::Write(std::string_view file_name, std::string_view contents) {
  std::filesystem::path final_path = directory_ / std::string(file_name);
  switch (options_.mode) {
    case FileWriteMode::kDirect:
      return WriteWhole(final_path, contents);
    case FileWriteMode::kRenameIn: {
      std::filesystem::path part = directory_ / ("." + std::string(file_name) + ".part");
      SESTON_RETURN_IF_ERROR(WriteWhole(part, contents));
      return fs_->Rename(part, final_path)
          .WithContext("cannot rename " + part.string() + " to " + final_path.string());
    }
    case FileWriteMode::kSlowWrite:
      return WriteInPieces(final_path, contents);
  }
  return Status::Internal("unknown file write mode");
}

Status DirectoryWriter::WriteWhole(const std::filesystem::path& path, std::string_view contents) {
  std::string context = "cannot write " + path.string();
  SESTON_ASSIGN_OR_RETURN(auto file, fs_->OpenForWrite(path, /*append=*/false));
  SESTON_RETURN_IF_ERROR(file->Append(contents).WithContext(context));
  return file->Close().WithContext(context);
}

Status DirectoryWriter::WriteInPieces(const std::filesystem::path& path,
                                      std::string_view contents) {
  std::string context = "cannot write " + path.string();
  SESTON_ASSIGN_OR_RETURN(auto file, fs_->OpenForWrite(path, /*append=*/false));
  auto pause =
      std::chrono::duration<double>(options_.slow_write_seconds / (options_.slow_write_pieces - 1));
  std::size_t pieces = static_cast<std::size_t>(options_.slow_write_pieces);
  std::size_t piece_bytes = (contents.size() + pieces - 1) / pieces;
  for (std::size_t i = 0; i < pieces; ++i) {
    if (i > 0) std::this_thread::sleep_for(pause);
    std::size_t begin = std::min(contents.size(), i * piece_bytes);
    // Append is an unbuffered write(2): a watcher sees the file grow piece by piece.
    SESTON_RETURN_IF_ERROR(file->Append(contents.substr(begin, piece_bytes)).WithContext(context));
  }
  return file->Close().WithContext(context);
}

}  // namespace seston::sim
