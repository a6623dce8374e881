// Exclusive use of an output folder (see folder_lock.hpp).
#include "orderband/folder_lock.hpp"

#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>

#include "orderband/error.hpp"

namespace orderband {

FolderLock::FolderLock(const std::string& folder) {
  std::error_code ec;
  std::filesystem::create_directories(folder, ec);
  if (ec) fail("cannot create output folder '", folder, "': ", ec.message());
  const std::string path = folder + "/.lock";
  fd_ = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  if (fd_ < 0) fail("cannot create the lock file '", path, "': ", std::strerror(errno));
  if (::flock(fd_, LOCK_EX | LOCK_NB) != 0) {
    const int err = errno;
    ::close(fd_);
    fd_ = -1;
    if (err == EWOULDBLOCK)
      fail("another run is writing into '", folder, "'; wait for it to finish or choose another output folder");
    fail("cannot lock '", path, "': ", std::strerror(err));
  }
}

FolderLock::~FolderLock() {
  if (fd_ >= 0) ::close(fd_);  // closing releases the lock
}

}  // namespace orderband
