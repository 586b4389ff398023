// Atomic file writes and output locks (see safe_file.hpp).
#include "io/safe_file.hpp"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <chrono>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <random>
#include <stdexcept>

#include "heraldry/common.hpp"
#include "heraldry/output.hpp"

namespace heraldry::output::detail {

namespace {

namespace fs = std::filesystem;

std::atomic<long long> write_calls{0};
std::atomic<long long> failing_call{-1};  // -1: not read from the environment yet; 0: none

// write(2) with the test hook: the failing call fails with ENOSPC.
ssize_t checked_write(int fd, const char* data, std::size_t n) {
  if (failing_call.load() < 0) {
    const char* env = std::getenv("HERALDRY_TEST_FAIL_WRITE");
    long long expected = -1;
    failing_call.compare_exchange_strong(expected, env ? std::max(0LL, std::atoll(env)) : 0LL);
  }
  const long long call = ++write_calls;
  if (call == failing_call.load()) {
    errno = ENOSPC;
    return -1;
  }
  return ::write(fd, data, n);
}

std::string unique_suffix() {
  static std::atomic<unsigned> counter{0};
  std::random_device rd;
  const unsigned long long r = (static_cast<unsigned long long>(rd()) << 32) ^ rd() ^
                               static_cast<unsigned long long>(
                                   std::chrono::steady_clock::now().time_since_epoch().count());
  char buf[64];
  std::snprintf(buf, sizeof buf, "%d-%u-%llx", static_cast<int>(::getpid()), counter++, r);
  return buf;
}

[[noreturn]] void fail(const std::string& path, const std::string& what, int err) {
  throw WriteError("cannot write " + path + ": " + what + ": " + std::strerror(err));
}

fs::path folder_of(const std::string& path) {
  const fs::path p(path);
  return p.has_parent_path() ? p.parent_path() : fs::path(".");
}

}  // namespace

void fail_write_after(long long n) { failing_call.store(n > 0 ? write_calls.load() + n : 0); }

void write_atomically(const std::string& path, std::string_view bytes) {
  const std::string tmp = path + ".tmp-" + unique_suffix();
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd < 0) fail(path, "cannot create the temporary file " + tmp, errno);
  auto abandon = [&](const std::string& what, int err) {
    ::close(fd);
    ::unlink(tmp.c_str());
    fail(path, what, err);
  };
  std::size_t done = 0;
  while (done < bytes.size()) {
    const ssize_t n = checked_write(fd, bytes.data() + done, bytes.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      abandon("write failed", errno);
    }
    done += static_cast<std::size_t>(n);
  }
  if (::fsync(fd) != 0) abandon("fsync failed", errno);
  if (::close(fd) != 0) {
    const int err = errno;
    ::unlink(tmp.c_str());
    fail(path, "close failed", err);
  }
  if (::rename(tmp.c_str(), path.c_str()) != 0) {
    const int err = errno;
    ::unlink(tmp.c_str());
    fail(path, "rename of " + tmp + " failed", err);
  }
  // The rename itself reaches the disk with the folder's entry.
  const int dir = ::open(folder_of(path).c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dir >= 0) {
    ::fsync(dir);
    ::close(dir);
  }
}

OutputLock::OutputLock(const std::string& path) : lock_path_(path + ".lock") {
  fd_ = ::open(lock_path_.c_str(), O_RDWR | O_CREAT | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd_ < 0)
    throw InputError("", 0, "output.file", "\"" + path + "\"", "a result file whose lock can be taken",
                     "cannot open " + lock_path_ + ": " + std::strerror(errno));
  if (::flock(fd_, LOCK_EX | LOCK_NB) != 0) {
    const int err = errno;
    char pid[32] = {0};
    const ssize_t n = ::pread(fd_, pid, sizeof pid - 1, 0);
    ::close(fd_);
    fd_ = -1;
    if (err == EWOULDBLOCK)
      throw InputError("", 0, "output.file", "\"" + path + "\"", "a result file no other heraldry run is writing",
                       std::string("another run holds ") + lock_path_ +
                           (n > 0 ? std::string(" (process ") + pid + ")" : std::string()) +
                           "; wait for it, or give this run another output file");
    throw InputError("", 0, "output.file", "\"" + path + "\"", "a result file whose lock can be taken",
                     "cannot lock " + lock_path_ + ": " + std::strerror(err));
  }
  const std::string me = std::to_string(static_cast<long long>(::getpid()));
  if (::ftruncate(fd_, 0) == 0) {
    [[maybe_unused]] const ssize_t w = ::pwrite(fd_, me.data(), me.size(), 0);
  }
}

OutputLock::~OutputLock() {
  if (fd_ < 0) return;
  ::unlink(lock_path_.c_str());
  ::close(fd_);
}

bool folder_writable(const std::string& folder, std::string* reason) {
  const std::string probe = (fs::path(folder) / (".heraldry-write-test-" + unique_suffix())).string();
  const int fd = ::open(probe.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd < 0) {
    if (reason) *reason = std::strerror(errno);
    return false;
  }
  ::close(fd);
  ::unlink(probe.c_str());
  return true;
}

}  // namespace heraldry::output::detail
