// Writing what the program makes: standard output through a checked buffer, and files replaced
// whole (temporary file, fsync, rename) or refused when they are not regular files.
#include "output.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <fmt/format.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <random>

#include "shelfstage/error.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::cli {

// --- standard output ------------------------------------------------------------------------

bool FdOutput::write_all(const char* data, std::size_t size) {
  if (error_ != 0) return false;
  while (size > 0) {
    const ssize_t n = ::write(fd_, data, size);
    if (n < 0) {
      if (errno == EINTR) continue;
      error_ = errno;
      return false;
    }
    if (n == 0) {  // a write of nothing would repeat for ever
      error_ = EIO;
      return false;
    }
    data += n;
    size -= static_cast<std::size_t>(n);
  }
  return true;
}

bool FdOutput::drain() {
  const auto pending = static_cast<std::size_t>(pptr() - pbase());
  setp(buffer_.data(), buffer_.data() + buffer_.size());
  return write_all(buffer_.data(), pending);
}

FdOutput::int_type FdOutput::overflow(int_type ch) {
  if (!drain()) return traits_type::eof();
  if (traits_type::eq_int_type(ch, traits_type::eof())) return traits_type::not_eof(ch);
  *pptr() = traits_type::to_char_type(ch);
  pbump(1);
  return ch;
}

std::streamsize FdOutput::xsputn(const char* s, std::streamsize n) {
  if (error_ != 0) return 0;
  const auto room = epptr() - pptr();
  if (n <= room) {
    std::memcpy(pptr(), s, static_cast<std::size_t>(n));
    pbump(static_cast<int>(n));
    return n;
  }
  // Larger than what is left: send the buffer, then the text itself.
  if (!drain() || !write_all(s, static_cast<std::size_t>(n))) return 0;
  return n;
}

int FdOutput::sync() { return drain() ? 0 : -1; }

void hold_standard_descriptors() {
  for (int fd = 0; fd <= 2; ++fd) {
    if (::fcntl(fd, F_GETFD) != -1 || errno != EBADF) continue;
    // open() takes the lowest free number, which is fd itself.
    const int got = ::open("/dev/null", fd == 0 ? O_WRONLY : O_RDONLY);
    if (got >= 0 && got != fd) ::close(got);
  }
}

std::string stdout_failure(int error) {
  return error != 0 ? fmt::format("writing standard output: {}", std::strerror(error))
                    : std::string("writing standard output failed");
}

// --- files ----------------------------------------------------------------------------------

namespace {

namespace fs = std::filesystem;

/// What a file type is called in a refusal.
const char* type_name(mode_t mode) {
  if (S_ISDIR(mode)) return "a folder";
  if (S_ISCHR(mode)) return "a character device";
  if (S_ISBLK(mode)) return "a block device";
  if (S_ISFIFO(mode)) return "a named pipe (fifo)";
  if (S_ISSOCK(mode)) return "a socket";
  return "not a regular file";
}

/// The file a path ends at once its symbolic links are followed (NOTES 2); the stat of it in
/// `st`, or exists = false when nothing is there.
struct Target {
  fs::path path;
  bool exists = false;
  struct stat st {};
};

Target resolve(std::string_view option, const std::string& given) {
  Target t;
  t.path = given;
  for (int hops = 0;; ++hops) {
    if (::lstat(t.path.c_str(), &t.st) != 0) {
      if (errno != ENOENT)
        throw InputError(
            fmt::format("{} '{}': cannot write: {}", option, units::clip(given, 200), std::strerror(errno)));
      t.exists = false;
      return t;
    }
    if (!S_ISLNK(t.st.st_mode)) {
      t.exists = true;
      return t;
    }
    if (hops == 40)
      throw InputError(fmt::format("{} '{}': cannot write: too many symbolic links", option, units::clip(given, 200)));
    std::error_code ec;
    const fs::path next = fs::read_symlink(t.path, ec);
    if (ec) throw InputError(fmt::format("{} '{}': cannot write: {}", option, units::clip(given, 200), ec.message()));
    t.path = next.is_absolute() ? next : t.path.parent_path() / next;
  }
}

/// Removes the temporary file unless it was renamed into place.
class TemporaryFile {
 public:
  TemporaryFile(const fs::path& folder, const fs::path& name, mode_t mode) {
    std::random_device rd;
    for (int attempt = 0; attempt < 100; ++attempt) {
      path_ = folder / fmt::format(".{}.{:08x}.tmp", name.string(), rd());
      fd_ = ::open(path_.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, mode);
      if (fd_ >= 0 || errno != EEXIST) break;
    }
  }
  TemporaryFile(const TemporaryFile&) = delete;
  TemporaryFile& operator=(const TemporaryFile&) = delete;
  ~TemporaryFile() {
    if (fd_ >= 0) ::close(fd_);
    if (!kept_) ::unlink(path_.c_str());
  }
  int fd() const { return fd_; }
  const fs::path& path() const { return path_; }
  /// Closes the file; false (errno set) when the close reports a failed write.
  bool close() {
    const int fd = fd_;
    fd_ = -1;
    return ::close(fd) == 0;
  }
  void keep() { kept_ = true; }

 private:
  fs::path path_;
  int fd_ = -1;
  bool kept_ = false;
};

}  // namespace

void write_file(std::string_view option, const std::string& path, std::string_view text) {
  const std::string shown = units::clip(path, 200);
  if (path.empty()) throw InputError(fmt::format("{} '': give a file name", option));
  // What the kernel finds at the end of the links first: /dev/stdout leads to a pipe or a
  // terminal through links of /proc that name no path.
  if (struct stat st{}; ::stat(path.c_str(), &st) == 0 && !S_ISREG(st.st_mode)) {
    std::error_code ec;
    const auto real = fs::canonical(path, ec);
    const std::string which = !ec && real.string() != path ? units::clip(real.string(), 200) + " is " : "";
    throw InputError(
        fmt::format("{} '{}': {}{}, not a regular file; nothing written", option, shown, which, type_name(st.st_mode)));
  }
  const Target target = resolve(option, path);
  if (target.exists && !S_ISREG(target.st.st_mode))
    throw InputError(fmt::format("{} '{}': {}{}, not a regular file; nothing written", option, shown,
                                 target.path.string() == path ? "" : units::clip(target.path.string(), 200) + " is ",
                                 type_name(target.st.st_mode)));
  const fs::path folder = target.path.has_parent_path() ? target.path.parent_path() : fs::path(".");
  struct stat folder_st {};
  if (::stat(folder.c_str(), &folder_st) != 0 || !S_ISDIR(folder_st.st_mode))
    throw InputError(fmt::format("{} '{}': the folder {} does not exist; nothing written", option, shown,
                                 units::clip(folder.string(), 200)));

  // A new file gets what the umask allows of 0666; a replaced one keeps its permission bits.
  const mode_t mode = target.exists ? (target.st.st_mode & 07777) : 0666;
  TemporaryFile tmp(folder, target.path.filename(), mode);
  auto fail = [&](int error) -> InputError {
    return InputError(fmt::format("{} '{}': cannot write: {}; nothing written", option, shown, std::strerror(error)));
  };
  if (tmp.fd() < 0) throw fail(errno);
  if (target.exists) {
    if (::fchmod(tmp.fd(), mode) != 0) throw fail(errno);
    // Keep the owner when allowed to (as root); otherwise the file becomes the writer's own.
    [[maybe_unused]] const int owned = ::fchown(tmp.fd(), target.st.st_uid, target.st.st_gid);
  }
  const char* data = text.data();
  std::size_t left = text.size();
  while (left > 0) {
    const ssize_t n = ::write(tmp.fd(), data, left);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) throw fail(n < 0 ? errno : EIO);
    data += n;
    left -= static_cast<std::size_t>(n);
  }
  if (::fsync(tmp.fd()) != 0) throw fail(errno);
  if (!tmp.close()) throw fail(errno);
  if (::rename(tmp.path().c_str(), target.path.c_str()) != 0) throw fail(errno);
  tmp.keep();
  // The rename is durable once the folder is: best effort, as some file systems refuse it.
  const int dir = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dir >= 0) {
    ::fsync(dir);
    ::close(dir);
  }
}

}  // namespace shelfstage::cli
