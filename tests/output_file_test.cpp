// Tests of all-or-nothing output and whole-file input: content written exactly, failures that leave the
// previous file and the directory as they were, and read errors that name the file.
#include "polystokes/io/output_file.h"

#include <fcntl.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>

#include <csignal>
#include <cstdio>
#include <filesystem>
#include <set>
#include <string>

#include "polystokes/core/errors.h"
#include "test_support.h"

namespace polystokes {
namespace {

std::set<std::string> entries_of(const std::string& directory) {
  std::set<std::string> names;
  for (const auto& entry : std::filesystem::directory_iterator(directory))
    names.insert(entry.path().filename().string());
  return names;
}

mode_t mode_of(const std::string& path) {
  struct stat info {};
  REQUIRE(::stat(path.c_str(), &info) == 0);
  return info.st_mode & 07777;
}

// Every byte value, NULs and a final byte without newline included.
std::string all_bytes(size_t repeat) {
  std::string out;
  for (size_t r = 0; r < repeat; ++r)
    for (int b = 0; b < 256; ++b) out += static_cast<char>(b);
  return out;
}

// Lowers the file-size limit for the current process so write() fails with EFBIG past it (POSIX
// setrlimit, RLIMIT_FSIZE); SIGXFSZ is ignored meanwhile so the failure arrives as an error, not a signal.
class FileSizeLimit {
 public:
  explicit FileSizeLimit(rlim_t bytes) {
    ::getrlimit(RLIMIT_FSIZE, &saved_);
    previous_handler_ = std::signal(SIGXFSZ, SIG_IGN);
    rlimit lowered = saved_;
    lowered.rlim_cur = bytes;
    ::setrlimit(RLIMIT_FSIZE, &lowered);
  }
  ~FileSizeLimit() {
    ::setrlimit(RLIMIT_FSIZE, &saved_);
    std::signal(SIGXFSZ, previous_handler_);
  }

 private:
  rlimit saved_{};
  void (*previous_handler_)(int);
};

TEST_CASE("write_file_atomically writes the exact bytes and replaces an existing file", "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string path = dir + "/out.bin";
  write_file_atomically(path, "first version\n");
  REQUIRE(test::read_bytes(path) == "first version\n");
  const std::string content = all_bytes(40);
  write_file_atomically(path, content);
  REQUIRE(test::read_bytes(path) == content);
  write_file_atomically(path, "");
  REQUIRE(test::file_exists(path));
  REQUIRE(test::read_bytes(path).empty());
  REQUIRE(entries_of(dir) == std::set<std::string>{"out.bin"});
}

TEST_CASE("write_file_atomically with a bare file name writes in the working directory", "[output_file]") {
  const std::string dir = test::temp_directory();
  const auto previous = std::filesystem::current_path();
  std::filesystem::current_path(dir);
  write_file_atomically("bare.txt", "x");
  std::filesystem::current_path(previous);
  REQUIRE(test::read_bytes(dir + "/bare.txt") == "x");
}

TEST_CASE(
    "write_file_atomically: a new file gets 0666 minus the umask, an existing file keeps its mode "
    "(POSIX open() and umask semantics, common practice for replacing files)",
    "[output_file]") {
  const std::string dir = test::temp_directory();
  const mode_t mask = ::umask(027);  // set a known mask for this test, restored below
  write_file_atomically(dir + "/new.txt", "n");
  ::umask(mask);
  REQUIRE(mode_of(dir + "/new.txt") == (0666 & ~027));

  test::write_text(dir + "/kept.txt", "old");
  ::chmod((dir + "/kept.txt").c_str(), 0600);
  write_file_atomically(dir + "/kept.txt", "new");
  REQUIRE(mode_of(dir + "/kept.txt") == 0600);
  REQUIRE(test::read_bytes(dir + "/kept.txt") == "new");
}

TEST_CASE("write_file_atomically: missing directory is an OutputError naming the path, nothing is created",
          "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string path = dir + "/absent/out.txt";
  REQUIRE_THROWS_AS(write_file_atomically(path, "content"), OutputError);
  REQUIRE_THROWS_WITH(write_file_atomically(path, "content"), Catch::StartsWith(path + ": "));
  REQUIRE(entries_of(dir).empty());
}

TEST_CASE(
    "write_file_atomically: a failing write leaves the previous file intact and no temporary file "
    "(POSIX rename() atomicity, IEEE Std 1003.1-2017)",
    "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string path = dir + "/set.pcs";
  const std::string previous = "previous complete content\n";
  test::write_text(path, previous);

  SECTION("write() fails part way (file size limit, EFBIG)") {
    const std::string big = all_bytes(64);  // 16 KiB, four times the limit
    {
      FileSizeLimit limit(4096);
      REQUIRE_THROWS_WITH(write_file_atomically(path, big), Catch::StartsWith(path + ": cannot write"));
    }
  }
  SECTION("rename() fails: the target is a directory") {
    const std::string target = dir + "/occupied";
    std::filesystem::create_directory(target);
    test::write_text(target + "/inside", "x");
    REQUIRE_THROWS_WITH(write_file_atomically(target, "content"),
                        Catch::StartsWith(target + ": cannot replace"));
    REQUIRE(std::filesystem::is_directory(target));
    REQUIRE(test::read_bytes(target + "/inside") == "x");
    std::filesystem::remove_all(target);
  }
  SECTION("directory not writable") {
    if (::geteuid() == 0) {
      WARN("running as root: permission bits do not stop writes, case not exercised");
    } else {
      ::chmod(dir.c_str(), 0555);
      REQUIRE_THROWS_WITH(write_file_atomically(path, "new"),
                          Catch::Contains("cannot create a file in directory"));
      ::chmod(dir.c_str(), 0755);
    }
  }
  REQUIRE(test::read_bytes(path) == previous);
  REQUIRE(entries_of(dir) == std::set<std::string>{"set.pcs"});
}

TEST_CASE("write_file_atomically(\"-\") writes to standard output", "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string captured = dir + "/stdout.txt";
  std::fflush(stdout);
  const int saved = ::dup(STDOUT_FILENO);
  const int file = ::open(captured.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  REQUIRE(file >= 0);
  ::dup2(file, STDOUT_FILENO);
  ::close(file);
  write_file_atomically("-", "to stdout\n");
  std::fflush(stdout);
  ::dup2(saved, STDOUT_FILENO);
  ::close(saved);
  REQUIRE(test::read_bytes(captured) == "to stdout\n");
  REQUIRE(entries_of(dir) == std::set<std::string>{"stdout.txt"});
}

TEST_CASE("read_file returns every byte and names the file when it cannot read", "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string content = all_bytes(3);
  test::write_text(dir + "/bytes.bin", content);
  REQUIRE(read_file(dir + "/bytes.bin") == content);
  REQUIRE(read_file(dir + "/bytes.bin").size() == 768);

  REQUIRE_THROWS_AS(read_file(dir + "/absent.pcs"), FormatError);
  REQUIRE_THROWS_WITH(read_file(dir + "/absent.pcs"),
                      dir + "/absent.pcs: cannot read: No such file or directory");
  REQUIRE_THROWS_WITH(read_file(dir), dir + ": cannot read: is a directory");
}

TEST_CASE(
    "OutputGroup: nothing is replaced until commit, and a failed rename puts the files already replaced back "
    "(POSIX rename() and link(), IEEE Std 1003.1-2017)",
    "[output_file]") {
  const std::string dir = test::temp_directory();
  const std::string set = dir + "/set.txt", json = dir + "/set.json";
  test::write_text(set, "previous set\n");
  test::write_text(json, "previous json\n");

  SECTION("both staged, then committed") {
    OutputGroup group;
    group.stage(set, "new set\n");
    group.stage(json, "new json\n");
    // Staged but not committed: the targets are untouched.
    REQUIRE(test::read_bytes(set) == "previous set\n");
    REQUIRE(test::read_bytes(json) == "previous json\n");
    group.commit();
    REQUIRE(test::read_bytes(set) == "new set\n");
    REQUIRE(test::read_bytes(json) == "new json\n");
  }
  SECTION("the second cannot be staged (directory missing): the first is never renamed") {
    {
      OutputGroup group;
      group.stage(set, "new set\n");
      REQUIRE_THROWS_WITH(group.stage(dir + "/absent/set.json", "new json\n"),
                          Catch::StartsWith(dir + "/absent/set.json: "));
    }
    REQUIRE(test::read_bytes(set) == "previous set\n");
  }
  SECTION("the second rename fails (a directory is in the way): the first gets its previous content back") {
    const std::string occupied = dir + "/occupied";
    std::filesystem::create_directory(occupied);
    test::write_text(occupied + "/inside", "x");
    const std::string fresh = dir + "/fresh.txt";
    OutputGroup group;
    group.stage(set, "new set\n");
    group.stage(fresh, "new file\n");
    group.stage(occupied, "new json\n");
    REQUIRE_THROWS_WITH(group.commit(), Catch::StartsWith(occupied + ": cannot replace") &&
                                            Catch::Contains("restored to their previous content"));
    REQUIRE(test::read_bytes(set) == "previous set\n");
    REQUIRE(!test::file_exists(fresh));  // it did not exist before: removed again
    REQUIRE(test::read_bytes(occupied + "/inside") == "x");
    std::filesystem::remove_all(occupied);
  }
  SECTION("one file named twice is refused at staging") {
    OutputGroup group;
    group.stage(set, "a");
    REQUIRE_THROWS_WITH(group.stage(dir + "/./set.txt", "b"), Catch::Contains("named twice"));
  }
  // No temporary or kept previous file remains in any case.
  REQUIRE(entries_of(dir) == std::set<std::string>{"set.json", "set.txt"});
}

}  // namespace
}  // namespace polystokes
