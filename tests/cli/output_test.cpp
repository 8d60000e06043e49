// Tests of checked standard output and of files replaced whole: special files refused, links followed.
#include <doctest/doctest.h>
#include <fcntl.h>
#include <sys/resource.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <unistd.h>

#include <cerrno>
#include <csignal>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <ostream>
#include <sstream>
#include <string>
#include <thread>

#include "output.hpp"
#include "shelfstage/error.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;
using namespace shelfstage::cli;
namespace fs = std::filesystem;

namespace {

std::string slurp(const fs::path& p) {
  std::ifstream f(p, std::ios::binary);
  std::ostringstream s;
  s << f.rdbuf();
  return s.str();
}

/// The names in a folder, to see that no temporary file was left behind.
std::size_t entries(const fs::path& dir) {
  std::size_t n = 0;
  for ([[maybe_unused]] const auto& e : fs::directory_iterator(dir)) ++n;
  return n;
}

std::string refusal(const std::string& path) {
  try {
    write_file("-o", path, "<html></html>");
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST_CASE("FdOutput: a full disk is reported with its errno, once, at the flush (NOTES 1)") {
  // /dev/full (Linux, null(4)): every write fails with ENOSPC.
  const int fd = ::open("/dev/full", O_WRONLY);
  REQUIRE(fd >= 0);
  {
    FdOutput buf(fd);
    std::ostream out(&buf);
    out << "kind,value,qty\n";  // fits the buffer: nothing is written yet
    CHECK(out.good());
    out.flush();
    CHECK(out.fail());
    CHECK(buf.write_error() == ENOSPC);
    CHECK(stdout_failure(buf.write_error()) == "writing standard output: No space left on device");
  }
  ::close(fd);
}

TEST_CASE("FdOutput: text larger than the buffer goes out whole; a reader gone away is EPIPE") {
  int p[2];
  REQUIRE(::pipe(p) == 0);
  std::string big;
  for (int i = 0; big.size() < 300000; ++i) big += std::to_string(i) + ",";
  std::string got;
  std::thread reader([&] {
    char chunk[4096];
    for (ssize_t n; (n = ::read(p[0], chunk, sizeof chunk)) > 0;) got.append(chunk, static_cast<std::size_t>(n));
  });
  {
    FdOutput buf(p[1]);
    std::ostream out(&buf);
    for (std::size_t at = 0; at < big.size(); at += 7000) out << big.substr(at, 7000);
    out << std::flush;
    CHECK(out.good());
    CHECK(buf.write_error() == 0);
  }
  ::close(p[1]);
  reader.join();
  CHECK(got == big);
  ::close(p[0]);
  // Nobody reads any more: with SIGPIPE ignored (as main does) the write fails with EPIPE.
  REQUIRE(::pipe(p) == 0);
  ::close(p[0]);
  const auto old = std::signal(SIGPIPE, SIG_IGN);
  {
    FdOutput buf(p[1]);
    std::ostream out(&buf);
    out << "lost" << std::flush;
    CHECK(out.fail());
    CHECK(buf.write_error() == EPIPE);
  }
  std::signal(SIGPIPE, old);
  ::close(p[1]);
}

TEST_CASE("write_file replaces a regular file whole, keeps its permission bits, leaves no temporary file") {
  test::TempDir dir;
  const auto target = dir / "stage.html";
  write_file("-o", target.string(), "first");
  CHECK(slurp(target) == "first");
  REQUIRE(::chmod(target.c_str(), 0640) == 0);
  write_file("-o", target.string(), "second, longer than the first");
  CHECK(slurp(target) == "second, longer than the first");
  struct stat st {};
  REQUIRE(::stat(target.c_str(), &st) == 0);
  CHECK((st.st_mode & 07777) == 0640);
  CHECK(entries(dir.path()) == 1);
}

TEST_CASE("write_file follows a symbolic link: the link stays and the file it names is replaced (NOTES 2)") {
  test::TempDir dir;
  fs::create_directory(dir / "www");
  const auto real = dir / "www" / "report.html";
  std::ofstream(real) << "old";
  fs::create_symlink("www/report.html", dir / "link.html");
  write_file("-o", (dir / "link.html").string(), "new");
  CHECK(fs::is_symlink(dir / "link.html"));
  CHECK(slurp(real) == "new");
  CHECK(entries(dir / "www") == 1);
  // A chain of links, and a link to nothing yet: the file is made where the link points.
  fs::create_symlink("link.html", dir / "chain.html");
  write_file("-o", (dir / "chain.html").string(), "via two links");
  CHECK(slurp(real) == "via two links");
  fs::create_symlink("www/later.html", dir / "dangling.html");
  write_file("-o", (dir / "dangling.html").string(), "made");
  CHECK(slurp(dir / "www" / "later.html") == "made");
  CHECK(fs::is_symlink(dir / "dangling.html"));
  // A loop of links is refused.
  fs::create_symlink("loop-b", dir / "loop-a");
  fs::create_symlink("loop-a", dir / "loop-b");
  CHECK(refusal((dir / "loop-a").string()).find("too many symbolic links") != std::string::npos);
}

TEST_CASE("write_file refuses folders, devices, fifos and sockets, writing nothing (NOTES 2)") {
  test::TempDir dir;
  CHECK(refusal(dir.path().string()).find("a folder, not a regular file; nothing written") != std::string::npos);
  // /dev/null and /dev/full are character devices (Linux devices(7)); neither may become a file.
  for (const char* device : {"/dev/null", "/dev/full"}) {
    CAPTURE(device);
    CHECK(refusal(device).find("a character device, not a regular file") != std::string::npos);
    struct stat st {};
    REQUIRE(::stat(device, &st) == 0);
    CHECK(S_ISCHR(st.st_mode));
  }
  const auto fifo = dir / "pipe";
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  CHECK(refusal(fifo.string()).find("a named pipe (fifo)") != std::string::npos);
  const auto sock_path = dir / "sock";
  const int sock = ::socket(AF_UNIX, SOCK_STREAM, 0);
  REQUIRE(sock >= 0);
  sockaddr_un addr{};
  addr.sun_family = AF_UNIX;
  std::strncpy(addr.sun_path, sock_path.c_str(), sizeof addr.sun_path - 1);
  REQUIRE(::bind(sock, reinterpret_cast<sockaddr*>(&addr), sizeof addr) == 0);
  CHECK(refusal(sock_path.string()).find("a socket") != std::string::npos);
  ::close(sock);
  // A link to a device is followed, and the device refused by name.
  fs::create_symlink("/dev/null", dir / "null.html");
  CHECK(refusal((dir / "null.html").string()).find("/dev/null is a character device") != std::string::npos);
  CHECK(fs::is_symlink(dir / "null.html"));
  // A folder that is not there, and an empty name.
  CHECK(refusal((dir / "nowhere" / "x.html").string()).find("does not exist; nothing written") != std::string::npos);
  CHECK(refusal("").find("give a file name") != std::string::npos);
  CHECK(entries(dir.path()) == 3);  // pipe, sock, null.html, and nothing else
}

TEST_CASE("write_file: a write that fails leaves the old file as it was") {
  // RLIMIT_FSIZE caps what this process may write; SIGXFSZ ignored, write(2) fails with EFBIG.
  test::TempDir dir;
  const auto target = dir / "keep.html";
  std::ofstream(target) << "the old report";
  const auto old_handler = std::signal(SIGXFSZ, SIG_IGN);
  rlimit old_limit{};
  REQUIRE(::getrlimit(RLIMIT_FSIZE, &old_limit) == 0);
  rlimit small = old_limit;
  small.rlim_cur = 1000;
  REQUIRE(::setrlimit(RLIMIT_FSIZE, &small) == 0);
  const std::string message = [&] {
    try {
      write_file("-o", target.string(), std::string(5000, 'x'));
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string();
  }();
  REQUIRE(::setrlimit(RLIMIT_FSIZE, &old_limit) == 0);
  std::signal(SIGXFSZ, old_handler);
  CHECK(message.find("File too large; nothing written") != std::string::npos);
  CHECK(slurp(target) == "the old report");
  CHECK(entries(dir.path()) == 1);
}
