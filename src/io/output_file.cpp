#include "polystokes/io/output_file.h"

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

#include "polystokes/core/errors.h"

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

/// Makes the new directory entries durable too; the files themselves are already complete, so a failure
/// here cannot leave a partial file and is not reported.
void sync_directory(const std::filesystem::path& directory) {
  const int directory_fd = ::open(directory.c_str(), O_RDONLY | O_DIRECTORY);
  if (directory_fd >= 0) {
    ::fsync(directory_fd);
    ::close(directory_fd);
  }
}

std::filesystem::path directory_of(const std::string& path) {
  const std::filesystem::path target(path);
  return target.has_parent_path() ? target.parent_path() : ".";
}

/// A unique unused name next to path, starting with a dot like the temporaries (mkstemp reserves it; the
/// caller links to it after removing the placeholder).
std::string unused_name_beside(const std::string& path, const std::string& purpose) {
  const std::filesystem::path target(path);
  std::string name =
      (directory_of(path) / ("." + target.filename().string() + "." + purpose + "-XXXXXX")).string();
  const int fd = ::mkstemp(name.data());
  if (fd < 0)
    throw OutputError(path + ": cannot create a file in directory '" + directory_of(path).string() +
                      "': " + reason(errno));
  ::close(fd);
  ::unlink(name.c_str());
  return name;
}

}  // namespace

struct OutputGroup::Staged {
  std::string path;
  TemporaryFile temporary;
};

OutputGroup::OutputGroup() = default;
OutputGroup::~OutputGroup() = default;

void OutputGroup::stage(const std::string& path, const std::string& content) {
  if (path == "-") {
    standard_output_ += content;
    writes_standard_output_ = true;
    return;
  }
  if (path.empty()) throw OutputError("output path is empty");
  // Two renames onto one file would keep only the second content (and undo the first wrongly).
  for (const auto& other : staged_)
    if (same_output_file(other->path, path))
      throw OutputError(path + ": named twice as an output (" + other->path + ")");

  const std::filesystem::path target(path);
  const std::filesystem::path directory = directory_of(path);
  // Same directory as the target so rename() stays within one file system and is atomic; the leading dot
  // keeps the temporary out of ordinary listings and globs.
  std::string name = (directory / ("." + target.filename().string() + ".tmp-XXXXXX")).string();
  const int fd = ::mkstemp(name.data());
  if (fd < 0) {
    throw OutputError(path + ": cannot create a file in directory '" + directory.string() +
                      "': " + reason(errno));
  }
  auto staged = std::unique_ptr<Staged>(new Staged{path, TemporaryFile(name, fd)});
  TemporaryFile& temporary = staged->temporary;

  struct stat existing {};
  const mode_t mode = ::stat(path.c_str(), &existing) == 0 && S_ISREG(existing.st_mode)
                          ? existing.st_mode & 07777
                          : 0666 & ~current_umask();
  if (::fchmod(temporary.fd(), mode) != 0)
    throw OutputError(path + ": cannot set file mode: " + reason(errno) + "; previous file left unchanged");

  write_all(temporary.fd(), content, path);
  if (::fsync(temporary.fd()) != 0 || temporary.close() != 0)
    throw OutputError(path + ": cannot flush to disk: " + reason(errno) + "; previous file left unchanged");
  staged_.push_back(std::move(staged));
}

void OutputGroup::commit() {
  if (writes_standard_output_) write_stdout(standard_output_);

  // Each target replaced so far, with the hard link that keeps its previous content (empty: it was new).
  struct Replaced {
    std::string path, previous;
  };
  std::vector<Replaced> replaced;
  const auto undo = [&replaced](const std::string& failure) {
    std::string message = failure;
    for (auto it = replaced.rbegin(); it != replaced.rend(); ++it) {
      const bool restored = it->previous.empty() ? ::unlink(it->path.c_str()) == 0
                                                 : ::rename(it->previous.c_str(), it->path.c_str()) == 0;
      if (!restored) message += "; " + it->path + " could not be restored: " + reason(errno);
    }
    if (replaced.empty()) return OutputError(message + "; previous file left unchanged");
    return OutputError(message + "; the files written with it were restored to their previous content");
  };

  for (size_t i = 0; i < staged_.size(); ++i) {
    Staged& staged = *staged_[i];
    // The last rename cannot be followed by a failure, so its previous content needs no keeping.
    // A directory in the way is left for rename() to refuse with its own reason.
    std::string previous;
    struct stat existing {};
    if (i + 1 < staged_.size() && ::lstat(staged.path.c_str(), &existing) == 0 &&
        !S_ISDIR(existing.st_mode)) {
      try {
        previous = unused_name_beside(staged.path, "prev");
      } catch (const OutputError& error) {
        throw undo(error.what());
      }
      if (::link(staged.path.c_str(), previous.c_str()) != 0)
        throw undo(staged.path + ": cannot keep the previous file while replacing it: " + reason(errno));
    }
    if (::rename(staged.temporary.name().c_str(), staged.path.c_str()) != 0) {
      const int error = errno;
      if (!previous.empty()) ::unlink(previous.c_str());
      throw undo(staged.path + ": cannot replace: " + reason(error));
    }
    staged.temporary.commit();
    replaced.push_back({staged.path, previous});
  }
  for (const Replaced& done : replaced)
    if (!done.previous.empty()) ::unlink(done.previous.c_str());
  for (const Replaced& done : replaced) sync_directory(directory_of(done.path));
  staged_.clear();
  standard_output_.clear();
  writes_standard_output_ = false;
}

bool same_output_file(const std::string& a, const std::string& b) {
  std::error_code error_a, error_b;
  const auto canonical_a = std::filesystem::weakly_canonical(a, error_a);
  const auto canonical_b = std::filesystem::weakly_canonical(b, error_b);
  return error_a || error_b ? a == b : canonical_a == canonical_b;
}

void write_file_atomically(const std::string& path, const std::string& content) {
  // Standard output directly: a group would hold a second copy of the content.
  if (path == "-") return write_stdout(content);
  OutputGroup group;
  group.stage(path, content);
  group.commit();
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
  // One read of the known size; a file whose size is not known ahead (a pipe, /proc) is read to its end.
  std::string content;
  const auto size = std::filesystem::file_size(path, error);
  if (!error && size > 0) {
    content.resize(static_cast<size_t>(size));
    in.read(content.data(), static_cast<std::streamsize>(size));
    content.resize(static_cast<size_t>(in.gcount()));
    if (in.bad()) throw format_error(path, 0, "cannot read: " + reason(errno));
    if (in.gcount() < static_cast<std::streamsize>(size)) return content;
  }
  std::ostringstream rest;
  rest << in.rdbuf();
  if (in.bad()) throw format_error(path, 0, "cannot read: " + reason(errno));
  content += rest.str();
  return content;
}

}  // namespace polystokes
