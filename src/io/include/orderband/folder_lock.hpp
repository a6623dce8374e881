// An output folder held by one run at a time.
#pragma once

#include <string>

namespace orderband {

/// Creates `FOLDER` if needed and holds an exclusive advisory lock (flock) on `FOLDER/.lock` for its lifetime, so that
/// a second run writing into the same folder stops with a clear error instead of mixing its outputs with the first
/// one's. The kernel releases the lock when the process ends, however it ends, so a killed run leaves no stale lock;
/// the empty `.lock` file stays in the folder.
class FolderLock {
 public:
  explicit FolderLock(const std::string& folder);
  ~FolderLock();
  FolderLock(const FolderLock&) = delete;
  FolderLock& operator=(const FolderLock&) = delete;

 private:
  int fd_ = -1;
};

}  // namespace orderband
