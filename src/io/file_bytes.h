// A whole input file's bytes as one read-only view: mapped from the page cache for regular files (no copy,
// no zero-filled buffer), read into memory for standard input and anything that cannot be mapped.
#pragma once

#include <string>
#include <string_view>

namespace polystokes {

/// Owns the bytes of one input file until destroyed or released. Not copyable; movable.
class FileBytes {
 public:
  /// Opens `path` ("-": standard input). Throws FormatError "path: cannot read: reason" when the file is
  /// missing, a directory or unreadable.
  explicit FileBytes(const std::string& path);
  ~FileBytes();
  FileBytes(const FileBytes&) = delete;
  FileBytes& operator=(const FileBytes&) = delete;
  FileBytes(FileBytes&& other) noexcept;
  FileBytes& operator=(FileBytes&& other) noexcept;

  std::string_view view() const { return view_; }
  /// Gives the memory back early (the view is empty afterwards).
  void release();

 private:
  std::string copy_;  // standard input or an unmappable file
  void* mapping_ = nullptr;
  size_t mapped_size_ = 0;
  std::string_view view_;
};

}  // namespace polystokes
