// Whole-file input and all-or-nothing output: readers and writers of every polystokes file go through here.
// A written file either appears complete or not at all; a failed write never leaves partial files behind.
#pragma once

#include <string>

namespace polystokes {

/// Writes content to path atomically: a temporary file is created in the same directory, written, flushed
/// to disk (fsync), closed and renamed over path (POSIX rename() replaces the name in one step).
/// path "-" writes to standard output instead. A new file gets mode 0666 minus the process umask; an
/// existing file keeps its mode. Throws OutputError naming the path on failure (directory missing or not
/// writable, disk full, path is a directory); the previous file then stays intact and no temporary file
/// remains. Cost: one pass over content.
void write_file_atomically(const std::string& path, const std::string& content);

/// Reads a whole file as bytes ("-" reads standard input to its end).
/// Throws FormatError "path: cannot read: reason" if the file is missing, a directory or unreadable.
std::string read_file(const std::string& path);

}  // namespace polystokes
