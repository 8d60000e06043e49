// Writing what the program makes: standard output through a checked buffer, and files replaced
// whole (temporary file, fsync, rename) or refused when they are not regular files.
//
// NOTES (numbered invariants; tests/cli/output_test.cpp checks each):
//  1. FdOutput writes to a file descriptor with write(2), retrying short writes and EINTR. The
//     first failure's errno is kept; the stream goes bad and later writes are dropped, so
//     the caller sees the failure once, at its final flush, and names it.
//  2. write_file follows symbolic links (the link stays; the file it ends at is replaced). What
//     the path ends at must be a regular file or nothing (a new file in an existing folder); a
//     folder, device, fifo or socket is refused before anything is written.
//  3. The new content goes to a temporary file in the target's folder (created exclusively,
//     with the old file's permission bits), is written whole, fsync'ed and closed, and only
//     then renamed over the target; the folder is fsync'ed after. Any failure removes the
//     temporary file, so the target keeps its old content, or stays absent.
#pragma once
#include <array>
#include <streambuf>
#include <string>
#include <string_view>

namespace shelfstage::cli {

/// A stream buffer that can say why its last write failed (an errno value, 0 when unknown).
/// run_app asks the output stream's buffer for it to name the failure.
class WriteErrorSource {
 public:
  virtual ~WriteErrorSource() = default;
  virtual int write_error() const = 0;
};

/// The program's standard output (NOTES 1): buffered, every write(2) checked.
class FdOutput : public std::streambuf, public WriteErrorSource {
 public:
  explicit FdOutput(int fd) : fd_(fd) { setp(buffer_.data(), buffer_.data() + buffer_.size()); }
  FdOutput(const FdOutput&) = delete;
  FdOutput& operator=(const FdOutput&) = delete;
  ~FdOutput() override { sync(); }
  int write_error() const override { return error_; }

 protected:
  int_type overflow(int_type ch) override;
  std::streamsize xsputn(const char* s, std::streamsize n) override;
  int sync() override;

 private:
  bool drain();
  bool write_all(const char* data, std::size_t size);
  int fd_;
  int error_ = 0;
  std::array<char, 64 * 1024> buffer_{};
};

/// Makes sure descriptors 0, 1 and 2 are open, so that no file the program opens takes one of
/// their numbers. A closed one is taken by /dev/null opened the other way round (stdin for
/// writing, stdout and stderr for reading): a read gives an error, and so does every write,
/// which the program then reports.
void hold_standard_descriptors();

/// Writes text to path as NOTES 2 and 3 describe. Throws InputError naming the option and the
/// path ("-o 'x.html': ..."), with nothing written, when the path is refused or a write fails.
void write_file(std::string_view option, const std::string& path, std::string_view text);

/// "writing standard output: No space left on device", for the errno a write failed with.
std::string stdout_failure(int error);

}  // namespace shelfstage::cli
