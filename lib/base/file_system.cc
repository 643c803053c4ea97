#include "base/file_system.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <system_error>

namespace seston {
namespace {

Status ErrnoStatus(std::string_view what, const std::filesystem::path& path, int error) {
  std::string message(what);
  message += " ";
  message += path.string();
  message += ": ";
  message += std::strerror(error);
  // ENOSPC and EDQUOT are a bound reached, not a fault of the code: callers stop taking
  // work and wait for space to return.
  if (error == ENOSPC || error == EDQUOT) return Status::ResourceExhausted(std::move(message));
  if (error == ENOENT) return Status::NotFound(std::move(message));
  return Status::IoError(std::move(message));
}

class PosixWritableFile final : public WritableFile {
 public:
  PosixWritableFile(int fd, std::filesystem::path path) : fd_(fd), path_(std::move(path)) {}
  ~PosixWritableFile() override {
    if (fd_ >= 0) ::close(fd_);
  }

  Status Append(std::string_view data) override {
    while (!data.empty()) {
      ssize_t written = ::write(fd_, data.data(), data.size());
      if (written < 0) {
        if (errno == EINTR) continue;
        return ErrnoStatus("cannot write", path_, errno);
      }
      data.remove_prefix(static_cast<std::size_t>(written));
    }
    return Status::Ok();
  }

  Status Sync() override {
    if (::fdatasync(fd_) != 0) return ErrnoStatus("cannot fsync", path_, errno);
    return Status::Ok();
  }

  Status Close() override {
    if (fd_ < 0) return Status::Ok();
    int result = ::close(fd_);
    fd_ = -1;
    if (result != 0) return ErrnoStatus("cannot close", path_, errno);
    return Status::Ok();
  }

 private:
  int fd_;
  std::filesystem::path path_;
};

}  // namespace

Result<std::string> PosixFileSystem::ReadFile(const std::filesystem::path& path,
                                              std::uint64_t max_bytes) {
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return ErrnoStatus("cannot open", path, errno);
  struct stat st {};
  if (::fstat(fd, &st) != 0) {
    int error = errno;
    ::close(fd);
    return ErrnoStatus("cannot stat", path, error);
  }
  if (static_cast<std::uint64_t>(st.st_size) > max_bytes) {
    ::close(fd);
    return Status::ResourceExhausted(path.string() + ": file is " + std::to_string(st.st_size) +
                                     " bytes, more than the limit of " +
                                     std::to_string(max_bytes) + " bytes");
  }
  std::string data;
  data.resize(static_cast<std::size_t>(st.st_size));
  std::size_t done = 0;
  while (done < data.size()) {
    ssize_t got = ::read(fd, data.data() + done, data.size() - done);
    if (got < 0) {
      if (errno == EINTR) continue;
      int error = errno;
      ::close(fd);
      return ErrnoStatus("cannot read", path, error);
    }
    if (got == 0) break;  // the file shrank while we read it
    done += static_cast<std::size_t>(got);
  }
  data.resize(done);
  ::close(fd);
  return data;
}

Result<std::unique_ptr<WritableFile>> PosixFileSystem::OpenForWrite(
    const std::filesystem::path& path, bool append) {
  int flags = O_WRONLY | O_CREAT | O_CLOEXEC | (append ? O_APPEND : O_TRUNC);
  int fd = ::open(path.c_str(), flags, 0644);
  if (fd < 0) return ErrnoStatus("cannot open for writing", path, errno);
  return std::unique_ptr<WritableFile>(std::make_unique<PosixWritableFile>(fd, path));
}

Status PosixFileSystem::Rename(const std::filesystem::path& from,
                               const std::filesystem::path& to) {
  if (::rename(from.c_str(), to.c_str()) != 0) {
    return ErrnoStatus("cannot rename to " + to.string() + ":", from, errno);
  }
  return Status::Ok();
}

Status PosixFileSystem::Remove(const std::filesystem::path& path) {
  if (::unlink(path.c_str()) != 0) return ErrnoStatus("cannot remove", path, errno);
  return Status::Ok();
}

Status PosixFileSystem::Truncate(const std::filesystem::path& path, std::uint64_t size_bytes) {
  if (::truncate(path.c_str(), static_cast<off_t>(size_bytes)) != 0) {
    return ErrnoStatus("cannot truncate", path, errno);
  }
  return Status::Ok();
}

Status PosixFileSystem::SyncDirectory(const std::filesystem::path& directory) {
  int fd = ::open(directory.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return ErrnoStatus("cannot open directory", directory, errno);
  int result = ::fsync(fd);
  int error = errno;
  ::close(fd);
  if (result != 0) return ErrnoStatus("cannot fsync directory", directory, error);
  return Status::Ok();
}

Status PosixFileSystem::CreateDirectories(const std::filesystem::path& directory) {
  std::error_code error;
  std::filesystem::create_directories(directory, error);
  if (error) return ErrnoStatus("cannot create directory", directory, error.value());
  return Status::Ok();
}

Result<FileInfo> PosixFileSystem::Stat(const std::filesystem::path& path) {
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) return ErrnoStatus("cannot stat", path, errno);
  FileInfo info;
  info.size_bytes = static_cast<std::uint64_t>(st.st_size);
  info.modified_seconds =
      static_cast<double>(st.st_mtim.tv_sec) + static_cast<double>(st.st_mtim.tv_nsec) * 1e-9;
  info.is_regular = S_ISREG(st.st_mode);
  info.is_directory = S_ISDIR(st.st_mode);
  return info;
}

bool PosixFileSystem::Exists(const std::filesystem::path& path) {
  struct stat st {};
  return ::stat(path.c_str(), &st) == 0;
}

Result<std::vector<DirectoryEntry>> PosixFileSystem::ListDirectory(
    const std::filesystem::path& directory) {
  std::error_code error;
  std::filesystem::directory_iterator it(directory, error);
  if (error) return ErrnoStatus("cannot list directory", directory, error.value());
  std::vector<DirectoryEntry> entries;
  for (const auto& entry : it) {
    DirectoryEntry out;
    out.name = entry.path().filename().string();
    auto info = Stat(entry.path());
    if (!info.ok()) continue;  // vanished between listing and stat: not ours to report
    out.info = *info;
    entries.push_back(std::move(out));
  }
  return entries;
}

Result<SpaceInfo> PosixFileSystem::Space(const std::filesystem::path& path) {
  struct statvfs vfs {};
  if (::statvfs(path.c_str(), &vfs) != 0) return ErrnoStatus("cannot statvfs", path, errno);
  SpaceInfo space;
  space.available_bytes = static_cast<std::uint64_t>(vfs.f_bavail) * vfs.f_frsize;
  space.capacity_bytes = static_cast<std::uint64_t>(vfs.f_blocks) * vfs.f_frsize;
  return space;
}

PosixFileSystem& PosixFileSystem::Instance() {
  static PosixFileSystem fs;
  return fs;
}

Status WriteFileAtomically(FileSystem& fs, const std::filesystem::path& path,
                           std::string_view data) {
  std::filesystem::path temp = path;
  temp += ".tmp";
  {
    SESTON_ASSIGN_OR_RETURN(auto file, fs.OpenForWrite(temp, /*append=*/false));
    Status status = file->Append(data);
    if (status.ok()) status = file->Sync();
    Status closed = file->Close();
    if (status.ok()) status = closed;
    if (!status.ok()) {
      (void)fs.Remove(temp);  // best effort: the temp name is ours and never read
      return status;
    }
  }
  SESTON_RETURN_IF_ERROR(fs.Rename(temp, path));
  std::filesystem::path directory = path.parent_path();
  if (directory.empty()) directory = ".";
  return fs.SyncDirectory(directory);
}

}  // namespace seston
