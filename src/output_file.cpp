#include "output_file.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
#include <sstream>

#include "errors.h"

namespace polystokes {
namespace {

std::string reason(int error_number) { return std::strerror(error_number); }

// umask() can only be read by setting it, which races with other threads creating files; Linux reports it
// read-only in /proc/self/status (since kernel 4.7). 022 is the common default when that line is absent.
mode_t current_umask() {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line)) {
    if (line.rfind("Umask:", 0) == 0) return static_cast<mode_t>(std::stoul(line.substr(6), nullptr, 8));
  }
  return 022;
}

// Removes the temporary file unless the rename succeeded, so every failure path (including exceptions
// thrown on the way) leaves the directory as it was.
class TemporaryFile {
 public:
  TemporaryFile(std::string name, int fd) : name_(std::move(name)), fd_(fd) {}
  TemporaryFile(const TemporaryFile&) = delete;
  TemporaryFile& operator=(const TemporaryFile&) = delete;
  ~TemporaryFile() {
    if (fd_ >= 0) ::close(fd_);
    if (!committed_) ::unlink(name_.c_str());
  }
  int fd() const { return fd_; }
  const std::string& name() const { return name_; }
  /// Closes the descriptor, reporting errors close() detects (delayed write failures on some file systems).
  int close() {
    const int result = ::close(fd_);
    fd_ = -1;
    return result;
  }
  void commit() { committed_ = true; }

 private:
  std::string name_;
  int fd_;
  bool committed_ = false;
};

void write_all(int fd, const std::string& content, const std::string& path) {
  const char* data = content.data();
  size_t left = content.size();
  while (left > 0) {
    const ssize_t written = ::write(fd, data, left);
    if (written < 0) {
      if (errno == EINTR) continue;
      throw OutputError(path + ": cannot write: " + reason(errno) + "; previous file left unchanged");
    }
    data += written;
    left -= static_cast<size_t>(written);
  }
}

void write_stdout(const std::string& content) {
  std::fwrite(content.data(), 1, content.size(), stdout);
  if (std::fflush(stdout) != 0 || std::ferror(stdout))
    throw OutputError("-: cannot write to standard output: " + reason(errno));
}

}  // namespace

void write_file_atomically(const std::string& path, const std::string& content) {
  if (path == "-") return write_stdout(content);
  if (path.empty()) throw OutputError("output path is empty");

  const std::filesystem::path target(path);
  const std::filesystem::path directory = target.has_parent_path() ? target.parent_path() : ".";
  // Same directory as the target so rename() stays within one file system and is atomic; the leading dot
  // keeps the temporary out of ordinary listings and globs.
  std::string name = (directory / ("." + target.filename().string() + ".tmp-XXXXXX")).string();
  const int fd = ::mkstemp(name.data());
  if (fd < 0) {
    throw OutputError(path + ": cannot create a file in directory '" + directory.string() +
                      "': " + reason(errno));
  }
  TemporaryFile temporary(name, fd);

  struct stat existing {};
  const mode_t mode = ::stat(path.c_str(), &existing) == 0 && S_ISREG(existing.st_mode)
                          ? existing.st_mode & 07777
                          : 0666 & ~current_umask();
  if (::fchmod(temporary.fd(), mode) != 0)
    throw OutputError(path + ": cannot set file mode: " + reason(errno) + "; previous file left unchanged");

  write_all(temporary.fd(), content, path);
  if (::fsync(temporary.fd()) != 0 || temporary.close() != 0)
    throw OutputError(path + ": cannot flush to disk: " + reason(errno) + "; previous file left unchanged");
  if (::rename(temporary.name().c_str(), path.c_str()) != 0)
    throw OutputError(path + ": cannot replace: " + reason(errno) + "; previous file left unchanged");
  temporary.commit();

  // Makes the new directory entry durable too; the file itself is already complete, so a failure here
  // cannot leave a partial file and is not reported.
  const int directory_fd = ::open(directory.c_str(), O_RDONLY | O_DIRECTORY);
  if (directory_fd >= 0) {
    ::fsync(directory_fd);
    ::close(directory_fd);
  }
}

std::string read_file(const std::string& path) {
  if (path == "-") {
    std::string content{std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>()};
    if (std::cin.bad()) throw format_error("-", 0, "cannot read standard input");
    return content;
  }
  std::error_code error;
  if (std::filesystem::is_directory(path, error)) throw format_error(path, 0, "cannot read: is a directory");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw format_error(path, 0, "cannot read: " + reason(errno));
  std::ostringstream content;
  content << in.rdbuf();
  if (in.bad()) throw format_error(path, 0, "cannot read: " + reason(errno));
  return content.str();
}

}  // namespace polystokes
