// Whole-file input and all-or-nothing output: readers and writers of every polystokes file go through here.
// A written file either appears complete or not at all; a failed write never leaves partial files behind.
#pragma once

#include <memory>
#include <string>
#include <vector>

namespace polystokes {

/// Writes content to path atomically: a temporary file is created in the same directory, written, flushed
/// to disk (fsync), closed and renamed over path (POSIX rename() replaces the name in one step).
/// path "-" writes to standard output instead. A new file gets mode 0666 minus the process umask; an
/// existing file keeps its mode. Throws OutputError naming the path on failure (directory missing or not
/// writable, disk full, path is a directory); the previous file then stays intact and no temporary file
/// remains. Cost: one pass over content.
void write_file_atomically(const std::string& path, const std::string& content);

/// Several output files replaced together, both (all) or none: a set and its JSON copy, for example.
/// stage() writes each content to a temporary file next to its target, flushed to disk, exactly as
/// write_file_atomically does, and leaves every target untouched; commit() then renames them into place in
/// staging order. Should a rename fail part way (the target turned into a directory, say), the targets
/// already replaced get their previous content back (kept as hard links meanwhile, so a reader never finds a
/// target missing) and those that were new are removed, before OutputError is thrown. A group destroyed
/// without commit() removes its temporaries. "-" (standard output) is held in memory and written at
/// commit(), before the renames, so a failed staging prints nothing either.
/// Cost: one pass over each content, plus one hard link per replaced file except the last.
class OutputGroup {
 public:
  OutputGroup();
  ~OutputGroup();
  OutputGroup(const OutputGroup&) = delete;
  OutputGroup& operator=(const OutputGroup&) = delete;

  /// Writes content to a temporary file for path. Throws OutputError naming path on failure (directory
  /// missing or not writable, disk full, a path already staged); staged files so far stay staged, targets
  /// untouched.
  void stage(const std::string& path, const std::string& content);

  /// Puts every staged file in place (see above). Throws OutputError naming the path that failed.
  void commit();

 private:
  struct Staged;
  std::vector<std::unique_ptr<Staged>> staged_;
  std::string standard_output_;
  bool writes_standard_output_ = false;
};

/// Whether two output paths name the same file (as far as can be told before they exist: the same
/// directory after resolving links and dot segments, and the same file name).
bool same_output_file(const std::string& a, const std::string& b);

/// Reads a whole file as bytes ("-" reads standard input to its end).
/// Throws FormatError "path: cannot read: reason" if the file is missing, a directory or unreadable.
std::string read_file(const std::string& path);

}  // namespace polystokes
