// Files that are either fully written or not there: a result or checkpoint is written to a fresh
// temporary name in its folder (created exclusively, never through a symlink), flushed to disk,
// then renamed over the target and the folder flushed. And a lock that keeps a second run off an
// output file. POSIX; internal to src/io.
#pragma once

#include <string>
#include <string_view>

namespace heraldry::output::detail {

/// Writes `bytes` to `path` atomically: a reader sees the old file or the complete new one, never
/// a part. The temporary file is `path` + ".tmp-" + a unique suffix, created with O_CREAT | O_EXCL
/// | O_NOFOLLOW (a planted file or symlink is never written through); every write(2), fsync(2),
/// close(2) and rename(2) is checked. Throws std::runtime_error naming the path and the reason
/// (e.g. "No space left on device"); the temporary file is removed and `path` is left as it was.
/// Test hook: with HERALDRY_TEST_FAIL_WRITE=N in the environment, the N-th write(2) call of the
/// process (1-based) fails with ENOSPC; fail_write_after(n) does the same from a test.
void write_atomically(const std::string& path, std::string_view bytes);

/// Test hook: the n-th write(2) call from now fails with ENOSPC (n <= 0: no failure).
void fail_write_after(long long n);

/// An exclusive lock on an output file for the lifetime of the object: `path` + ".lock", held
/// with flock(2) (released by the kernel if the process dies, so a killed run never leaves a
/// stale lock). Throws InputError (key output.file) when another process holds it.
class OutputLock {
public:
  explicit OutputLock(const std::string& path);
  ~OutputLock();
  OutputLock(const OutputLock&) = delete;
  OutputLock& operator=(const OutputLock&) = delete;

private:
  std::string lock_path_;
  int fd_ = -1;
};

/// True when a file can be created in `folder` (tried with a unique name, removed at once).
bool folder_writable(const std::string& folder, std::string* reason = nullptr);

}  // namespace heraldry::output::detail
