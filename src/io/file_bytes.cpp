#include "io/file_bytes.h"

#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <utility>

#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {
namespace {

/// Closes a descriptor on every path out of the constructor.
struct Descriptor {
  int fd = -1;
  ~Descriptor() {
    if (fd >= 0) ::close(fd);
  }
};

}  // namespace

FileBytes::FileBytes(const std::string& path) {
  Descriptor file;
  struct stat status {};
  if (path != "-") {
    file.fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (file.fd < 0) throw format_error(path, 0, std::string("cannot read: ") + std::strerror(errno));
    if (::fstat(file.fd, &status) != 0)
      throw format_error(path, 0, std::string("cannot read: ") + std::strerror(errno));
    if (S_ISDIR(status.st_mode)) throw format_error(path, 0, "cannot read: is a directory");
  }
  // MAP_POPULATE maps the cached pages up front, so parsing takes no page faults; an empty or special file
  // (a pipe, a device) is read the ordinary way.
  if (file.fd >= 0 && S_ISREG(status.st_mode) && status.st_size > 0) {
    void* mapping = ::mmap(nullptr, static_cast<size_t>(status.st_size), PROT_READ,
                           MAP_PRIVATE | MAP_POPULATE, file.fd, 0);
    if (mapping != MAP_FAILED) {
      mapping_ = mapping;
      mapped_size_ = static_cast<size_t>(status.st_size);
      ::madvise(mapping_, mapped_size_, MADV_SEQUENTIAL);
      view_ = std::string_view(static_cast<const char*>(mapping_), mapped_size_);
      return;
    }
  }
  copy_ = read_file(path);
  view_ = copy_;
}

FileBytes::~FileBytes() { release(); }

FileBytes::FileBytes(FileBytes&& other) noexcept { *this = std::move(other); }

FileBytes& FileBytes::operator=(FileBytes&& other) noexcept {
  if (this == &other) return *this;
  release();
  copy_ = std::move(other.copy_);
  mapping_ = std::exchange(other.mapping_, nullptr);
  mapped_size_ = std::exchange(other.mapped_size_, 0);
  view_ = mapping_ != nullptr ? std::exchange(other.view_, {}) : std::string_view(copy_);
  other.view_ = {};
  return *this;
}

void FileBytes::release() {
  if (mapping_ != nullptr) ::munmap(mapping_, mapped_size_);
  mapping_ = nullptr;
  mapped_size_ = 0;
  std::string().swap(copy_);
  view_ = {};
}

}  // namespace polystokes
