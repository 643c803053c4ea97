#include "support/faulty_file_system.h"

namespace seston::testing {

std::string_view FileOperationName(FileOperation operation) {
  switch (operation) {
    case FileOperation::kReadFile:
      return "read";
    case FileOperation::kOpenForWrite:
      return "open";
    case FileOperation::kAppend:
      return "append";
    case FileOperation::kSync:
      return "sync";
    case FileOperation::kClose:
      return "close";
    case FileOperation::kRename:
      return "rename";
    case FileOperation::kRemove:
      return "remove";
    case FileOperation::kTruncate:
      return "truncate";
    case FileOperation::kSyncDirectory:
      return "sync directory";
    case FileOperation::kCreateDirectories:
      return "create directories";
    case FileOperation::kStat:
      return "stat";
    case FileOperation::kListDirectory:
      return "list directory";
    case FileOperation::kSpace:
      return "space";
    case FileOperation::kExists:
      return "exists";
  }
  return "unknown";
}

class FaultyWritableFile final : public WritableFile {
 public:
  FaultyWritableFile(FaultyFileSystem& owner, std::unique_ptr<WritableFile> base,
                     std::filesystem::path path)
      : owner_(&owner), base_(std::move(base)), path_(std::move(path)) {}

  Status Append(std::string_view data) override {
    if (const FileFault* fault = owner_->Check(FileOperation::kAppend)) {
      if (fault->torn) {
        SESTON_RETURN_IF_ERROR(base_->Append(data.substr(0, data.size() / 2)));
      }
      return FaultyFileSystem::Injected(*fault, FileOperation::kAppend, path_);
    }
    return base_->Append(data);
  }
  Status Sync() override {
    if (const FileFault* fault = owner_->Check(FileOperation::kSync)) {
      return FaultyFileSystem::Injected(*fault, FileOperation::kSync, path_);
    }
    return base_->Sync();
  }
  Status Close() override {
    if (const FileFault* fault = owner_->Check(FileOperation::kClose)) {
      (void)base_->Close();  // the descriptor is gone either way, as with close(2)
      return FaultyFileSystem::Injected(*fault, FileOperation::kClose, path_);
    }
    return base_->Close();
  }

 private:
  FaultyFileSystem* owner_;
  std::unique_ptr<WritableFile> base_;
  std::filesystem::path path_;
};

void FaultyFileSystem::Arm(FileFault fault) { faults_.push_back({std::move(fault)}); }

std::uint64_t FaultyFileSystem::count(FileOperation operation) const {
  auto it = counts_.find(operation);
  return it == counts_.end() ? 0 : it->second;
}

void FaultyFileSystem::ResetCounts() {
  counts_.clear();
  failable_count_ = 0;
}

const FileFault* FaultyFileSystem::Check(FileOperation operation) {
  ++counts_[operation];
  if (operation == FileOperation::kExists) return nullptr;
  ++failable_count_;
  const FileFault* hit = nullptr;
  for (ArmedFault& armed : faults_) {
    if (armed.done) continue;
    if (armed.fault.operation && *armed.fault.operation != operation) continue;
    ++armed.seen;
    if (armed.seen < armed.fault.nth) continue;
    if (!armed.fault.persistent) armed.done = true;
    if (!hit) {
      hit = &armed.fault;
      ++fired_;
    }
  }
  return hit;
}

Status FaultyFileSystem::Injected(const FileFault& fault, FileOperation operation,
                                  const std::filesystem::path& path) {
  return fault.status.WithContext("injected fault on " + std::string(FileOperationName(operation)) +
                                  " of " + path.string());
}

Result<std::string> FaultyFileSystem::ReadFile(const std::filesystem::path& path,
                                               std::uint64_t max_bytes) {
  if (const FileFault* fault = Check(FileOperation::kReadFile)) {
    return Injected(*fault, FileOperation::kReadFile, path);
  }
  return base_->ReadFile(path, max_bytes);
}

Result<std::unique_ptr<WritableFile>> FaultyFileSystem::OpenForWrite(
    const std::filesystem::path& path, bool append) {
  if (const FileFault* fault = Check(FileOperation::kOpenForWrite)) {
    return Injected(*fault, FileOperation::kOpenForWrite, path);
  }
  SESTON_ASSIGN_OR_RETURN(auto file, base_->OpenForWrite(path, append));
  return std::unique_ptr<WritableFile>(
      std::make_unique<FaultyWritableFile>(*this, std::move(file), path));
}

Status FaultyFileSystem::Rename(const std::filesystem::path& from,
                                const std::filesystem::path& to) {
  if (const FileFault* fault = Check(FileOperation::kRename)) {
    return Injected(*fault, FileOperation::kRename, from);
  }
  return base_->Rename(from, to);
}

Status FaultyFileSystem::Remove(const std::filesystem::path& path) {
  if (const FileFault* fault = Check(FileOperation::kRemove)) {
    return Injected(*fault, FileOperation::kRemove, path);
  }
  return base_->Remove(path);
}

Status FaultyFileSystem::Truncate(const std::filesystem::path& path, std::uint64_t size_bytes) {
  if (const FileFault* fault = Check(FileOperation::kTruncate)) {
    return Injected(*fault, FileOperation::kTruncate, path);
  }
  return base_->Truncate(path, size_bytes);
}

Status FaultyFileSystem::SyncDirectory(const std::filesystem::path& directory) {
  if (const FileFault* fault = Check(FileOperation::kSyncDirectory)) {
    return Injected(*fault, FileOperation::kSyncDirectory, directory);
  }
  return base_->SyncDirectory(directory);
}

Status FaultyFileSystem::CreateDirectories(const std::filesystem::path& directory) {
  if (const FileFault* fault = Check(FileOperation::kCreateDirectories)) {
    return Injected(*fault, FileOperation::kCreateDirectories, directory);
  }
  return base_->CreateDirectories(directory);
}

Result<FileInfo> FaultyFileSystem::Stat(const std::filesystem::path& path) {
  if (const FileFault* fault = Check(FileOperation::kStat)) {
    return Injected(*fault, FileOperation::kStat, path);
  }
  return base_->Stat(path);
}

bool FaultyFileSystem::Exists(const std::filesystem::path& path) {
  Check(FileOperation::kExists);
  return base_->Exists(path);
}

Result<std::vector<DirectoryEntry>> FaultyFileSystem::ListDirectory(
    const std::filesystem::path& directory) {
  if (const FileFault* fault = Check(FileOperation::kListDirectory)) {
    return Injected(*fault, FileOperation::kListDirectory, directory);
  }
  return base_->ListDirectory(directory);
}

Result<SpaceInfo> FaultyFileSystem::Space(const std::filesystem::path& path) {
  if (const FileFault* fault = Check(FileOperation::kSpace)) {
    return Injected(*fault, FileOperation::kSpace, path);
  }
  return base_->Space(path);
}

}  // namespace seston::testing
