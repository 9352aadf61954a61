// Runs the shell commands of docs/tutorial.md in order, the way a newcomer would, and holds them to what the
// tutorial says: each step's exit code, the output lines and file excerpts it shows, and that a failing step
// leaves its output file as it was.
// Sources: the project's own documentation, docs/tutorial.md ("Every command and option below exists as
// shown; the outputs are real and shown whole", only file excerpts "shortened, where marked `...`"), and the
// exit codes written in README.md and `polystokes --help` (0 ok, 1 usage error, 2 bad input; zero for
// success, non-zero for failure is common practice for command-line tools).
#include <fcntl.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <optional>
#include <regex>
#include <sstream>
#include <vector>

#include "test_support.h"

extern char** environ;

using namespace polystokes::test;

namespace {

/// One command of the tutorial (`$ ` prompt, continuations joined), or a prompt-less block run as one script.
struct Step {
  std::string command;
  std::vector<std::string> shown;  ///< output lines shown after a prompted command
  std::optional<int> stated_exit;  ///< from a following `$ echo $?` and the number shown under it
  bool prompted = true;
  int line = 0;  ///< in the markdown
};

/// A code block showing part of a file the steps before it wrote.
struct Excerpt {
  std::vector<std::string> lines;
  size_t steps_before = 0;
  int line = 0;
};

struct Tutorial {
  std::vector<Step> steps;
  std::vector<Excerpt> excerpts;
  std::vector<int> setup_blocks;      ///< lines of blocks the test's own set-up stands in for
  std::vector<std::string> problems;  ///< text the extraction could not place
};

std::string trimmed(const std::string& text) {
  const char* blank = " \t\r\n";
  const auto begin = text.find_first_not_of(blank);
  if (begin == std::string::npos) return "";
  return text.substr(begin, text.find_last_not_of(blank) - begin + 1);
}

bool starts_with(const std::string& text, const std::string& prefix) { return text.rfind(prefix, 0) == 0; }

bool ends_with(const std::string& text, const std::string& suffix) {
  return text.size() >= suffix.size() &&
         text.compare(text.size() - suffix.size(), suffix.size(), suffix) == 0;
}

/// Appends the lines after `*index` that a trailing backslash continues, as a shell reader joins them.
std::string joined_command(const std::vector<std::string>& lines, size_t* index) {
  std::string command = lines[*index];
  while (ends_with(trimmed(command), "\\") && *index + 1 < lines.size()) {
    command = trimmed(command);
    command.pop_back();
    command = trimmed(command) + " " + trimmed(lines[++*index]);
  }
  return command;
}

/// Steps of a block whose commands carry the `$ ` prompt, each followed by the output the tutorial shows.
void read_prompt_block(const std::vector<std::string>& lines, int first_line, Tutorial& tutorial) {
  const std::string prompt = "$ ";
  for (size_t i = 0; i < lines.size(); ++i) {
    if (!starts_with(lines[i], prompt)) {
      tutorial.problems.push_back("line " + std::to_string(first_line + i) + ": output before any command");
      continue;
    }
    const int line = first_line + int(i);
    const std::string command = joined_command(lines, &i).substr(prompt.size());
    std::vector<std::string> shown;
    while (i + 1 < lines.size() && !starts_with(lines[i + 1], prompt)) shown.push_back(lines[++i]);
    if (command != "echo $?") {
      tutorial.steps.push_back({command, shown, std::nullopt, true, line});
      continue;
    }
    // `echo $?` is how the tutorial states the exit code of the command before it.
    const bool one_number = shown.size() == 1 && std::regex_match(trimmed(shown[0]), std::regex("[0-9]+"));
    if (tutorial.steps.empty() || !one_number || tutorial.steps.back().stated_exit)
      tutorial.problems.push_back("line " + std::to_string(line) +
                                  ": `echo $?` without one command and one code");
    else
      tutorial.steps.back().stated_exit = std::stoi(trimmed(shown[0]));
  }
}

/// Splits the markdown into fenced code blocks and sorts each into steps, an excerpt, or the set-up.
Tutorial read_tutorial(const std::string& markdown) {
  Tutorial tutorial;
  std::istringstream in(markdown);
  std::vector<std::string> block;
  bool inside = false;
  int line_number = 0, block_line = 0;
  for (std::string line; std::getline(in, line);) {
    ++line_number;
    if (!starts_with(line, "```")) {
      if (inside) block.push_back(line);
      continue;
    }
    inside = !inside;
    if (inside) {
      block.clear();
      block_line = line_number + 1;
      continue;
    }
    if (block.empty()) continue;
    const bool prompted =
        std::any_of(block.begin(), block.end(), [](const auto& l) { return starts_with(l, "$ "); });
    const bool setup = std::any_of(block.begin(), block.end(), [](const auto& l) {
      return l.find("scripts/setup.sh") != std::string::npos;
    });
    if (prompted) {
      read_prompt_block(block, block_line, tutorial);
    } else if (setup) {
      tutorial.setup_blocks.push_back(block_line);
    } else if (starts_with(block.front(), "polystokes ")) {
      // Commands given without prompts and without output (the table of step 5): one script, as pasted.
      std::string script;
      for (size_t i = 0; i < block.size(); ++i) script += joined_command(block, &i) + "\n";
      tutorial.steps.push_back({script, {}, std::nullopt, false, block_line});
    } else {
      tutorial.excerpts.push_back({block, tutorial.steps.size(), block_line});
    }
  }
  if (inside)
    tutorial.problems.push_back("code block opened at line " + std::to_string(block_line) + " never closed");
  return tutorial;
}

const std::regex& number_pattern() {
  static const std::regex number(R"([-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)");
  return number;
}

/// Largest magnitude of the numbers in `text` (0 if none).
double largest_number(const std::string& text) {
  double scale = 0;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), number_pattern());
       it != std::sregex_iterator(); ++it)
    scale = std::max(scale, std::abs(std::stod(it->str())));
  return scale;
}

/// `text` with every number written to 6 significant digits, and numbers below 1e-9 times `scale` written as
/// "0~": the digits that depend on the order of floating-point sums and on the instruction set (fused
/// multiply-adds or not) are not what the tutorial shows a reader.
std::string rounded_numbers(const std::string& text, double scale) {
  std::string out;
  size_t last = 0;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), number_pattern());
       it != std::sregex_iterator(); ++it) {
    out += text.substr(last, size_t(it->position()) - last);
    const double value = std::stod(it->str());
    char written[32];
    std::snprintf(written, sizeof written, "%.6g", value);
    out += std::abs(value) < 1e-9 * scale ? "0~" : written;
    last = size_t(it->position() + it->length());
  }
  return out + text.substr(last);
}

/// `text` with every run of blanks as one blank: columns padded to the printed width of shortest round-trip
/// numbers move when a last digit does.
std::string single_blanks(const std::string& text) {
  std::string out;
  for (const char c : text)
    if (c != ' ' || out.empty() || out.back() != ' ') out += c;
  return out;
}

/// Whether `real` is what `shown` shows, "..." in it standing for any text (the tutorial's mark of shortened
/// output), numbers compared as rounded_numbers writes them (each line against its own largest number) and
/// blanks as single_blanks leaves them.
bool shows(const std::string& shown_text, const std::string& real_text) {
  const std::string shown = single_blanks(shown_text), real = single_blanks(real_text);
  const std::string mark = "...";
  std::vector<std::string> parts;
  for (size_t start = 0;;) {
    const size_t found = shown.find(mark, start);
    parts.push_back(shown.substr(start, found - start));
    if (found == std::string::npos) break;
    start = found + mark.size();
  }
  double shown_scale = 0;
  for (const std::string& part : parts) shown_scale = std::max(shown_scale, largest_number(part));
  for (std::string& part : parts) part = rounded_numbers(part, shown_scale);
  const std::string line = rounded_numbers(real, largest_number(real));
  if (parts.size() == 1) return parts.front() == line;
  if (!starts_with(line, parts.front())) return false;
  size_t position = parts.front().size();
  for (size_t k = 1; k + 1 < parts.size(); ++k) {
    position = line.find(parts[k], position);
    if (position == std::string::npos) return false;
    position += parts[k].size();
  }
  return line.size() >= position + parts.back().size() && ends_with(line, parts.back());
}

bool any_shows(const std::string& pattern, const std::vector<std::string>& lines) {
  return std::any_of(lines.begin(), lines.end(), [&](const std::string& l) { return shows(pattern, l); });
}

/// Non-empty lines, trimmed.
std::vector<std::string> real_lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);)
    if (!trimmed(line).empty()) lines.push_back(trimmed(line));
  return lines;
}

// Exit codes the tutorial implies without an `echo $?`, keyed by a fragment found in exactly one command.
struct ExpectedExit {
  const char* fragment;
  int code;
};
const ExpectedExit exit_table[] = {
    // "Requests that would not fit in memory are refused up front": README.md and --help give 2 (bad input)
    // for "a request that would exceed memory".
    {"--degree 10000", 2},
    // The OFF header that claims 10^9 faces is the tutorial's second such request (same code).
    {"inspect liar.off", 2},
};

// A table entry for text starting with `key`.
struct Keyed {
  const char* key;
  const char* value;
};

template <size_t N>
const char* value_for(const Keyed (&table)[N], const std::string& text) {
  for (const Keyed& entry : table)
    if (starts_with(text, entry.key)) return entry.value;
  return nullptr;
}

// Shown lines with parts that legitimately differ between runs or machines: a line starting with the key is
// compared with the pattern instead ("..." = any text).
const Keyed volatile_lines[] = {
    // compute: the wall-clock time of the run.
    {"time ", "time ... s"},
    // The degree-10000 request meets whichever limit comes first, and its estimate scales with the thread
    // count (all cores by default) and the memory available: only the start and the degree are fixed.
    {"polystokes: error: degree 10000 ", "polystokes: error: ...degree 10000..."},
    // report: the file size moves with the lengths of the shortest round-trip numbers in it.
    {"polystokes report: ", "polystokes report: ... written (... kB)"},
};

// Files the prompt-less excerpt blocks show, keyed by the excerpt's first line; each is read right after
// the steps before the excerpt.
const Keyed excerpt_sources[] = {
    // Step 2, "the top of its table": the text file compute just wrote.
    {"[coefficients]", "out/varnek.txt"},
    // Step 4, "appended to the set's history, which now reads": the Schmidt set just written.
    {"history = ", "out/varnek_schmidt.txt"},
};

std::string pattern_for(const std::string& shown_line) {
  const std::string line = trimmed(shown_line);
  const char* pattern = value_for(volatile_lines, line);
  return pattern ? pattern : line;
}

int expected_exit(const Step& step) {
  if (step.stated_exit) return *step.stated_exit;
  for (const ExpectedExit& e : exit_table)
    if (step.command.find(e.fragment) != std::string::npos) return e.code;
  return 0;
}

/// Paths given to `-o` in a command (the outputs a failed run must leave alone).
std::vector<std::string> output_paths(const std::string& command) {
  static const std::regex option(R"((^|\s)-o\s+([^\s;|&]+))");
  std::vector<std::string> paths;
  for (auto it = std::sregex_iterator(command.begin(), command.end(), option); it != std::sregex_iterator();
       ++it)
    paths.push_back((*it)[2]);
  return paths;
}

struct ShellResult {
  int exit_code = -1;
  std::string out, err;
  double seconds = 0;
};

/// Runs `script` with /bin/sh -e in `work_dir`, with `bin_dir` first on PATH and no standard input.
ShellResult run_shell(const std::string& script, const std::string& work_dir, const std::string& bin_dir) {
  static const std::string capture = temp_directory();
  const std::string out_path = capture + "/stdout", err_path = capture + "/stderr";
  std::vector<std::string> environment;
  std::string path = "/usr/local/bin:/usr/bin:/bin";
  for (char** entry = environ; *entry; ++entry) {
    if (starts_with(*entry, "PATH="))
      path = *entry + 5;
    else
      environment.emplace_back(*entry);
  }
  environment.push_back("PATH=" + bin_dir + ":" + path);
  std::vector<char*> envp;
  for (std::string& entry : environment) envp.push_back(entry.data());
  envp.push_back(nullptr);
  const char* argv[] = {"sh", "-e", "-c", script.c_str(), nullptr};

  const int in = ::open("/dev/null", O_RDONLY | O_CLOEXEC);
  const int out = ::open(out_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  const int err = ::open(err_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  ShellResult result;
  const auto start = std::chrono::steady_clock::now();
  const pid_t child = in >= 0 && out >= 0 && err >= 0 ? ::fork() : -1;
  if (child == 0) {
    if (::chdir(work_dir.c_str()) != 0 || ::dup2(in, 0) < 0 || ::dup2(out, 1) < 0 || ::dup2(err, 2) < 0)
      ::_exit(127);
    ::execve("/bin/sh", const_cast<char**>(argv), envp.data());
    ::_exit(127);
  }
  for (int fd : {in, out, err})
    if (fd >= 0) ::close(fd);
  int status = 0;
  if (child > 0 && ::waitpid(child, &status, 0) == child && WIFEXITED(status))
    result.exit_code = WEXITSTATUS(status);
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  result.out = read_bytes(out_path);
  result.err = read_bytes(err_path);
  return result;
}

struct StepRun {
  ShellResult shell;
  std::vector<std::pair<std::string, std::optional<std::string>>> outputs_before, outputs_after;
};

struct TutorialRun {
  Tutorial tutorial;
  std::string resolved_cli;  ///< `command -v polystokes` in the working directory
  std::vector<StepRun> runs;
  std::vector<std::string> excerpt_files;  ///< contents of each excerpt's file when the tutorial shows it
  double seconds = 0;
};

std::vector<std::pair<std::string, std::optional<std::string>>> snapshot(
    const std::vector<std::string>& paths, const std::string& dir) {
  std::vector<std::pair<std::string, std::optional<std::string>>> files;
  for (const std::string& path : paths) {
    const std::string full = dir + "/" + path;
    files.emplace_back(path, file_exists(full) ? std::optional<std::string>(read_bytes(full)) : std::nullopt);
  }
  return files;
}

const char* excerpt_file(const Excerpt& excerpt) { return value_for(excerpt_sources, excerpt.lines.front()); }

/// The whole tutorial, run once for all test cases in a working directory laid out as its step 0 leaves the
/// repository root: shapes-demo/ and tests/data/ (links to the source tree), an empty out/, and the built
/// polystokes first on PATH.
const TutorialRun& tutorial_run() {
  static const TutorialRun run = [] {
    TutorialRun r;
    r.tutorial = read_tutorial(read_bytes(source_path("docs/tutorial.md")));
    const std::string dir = temp_directory();
    std::filesystem::create_directories(dir + "/tests");
    std::filesystem::create_directories(dir + "/out");
    std::filesystem::create_directory_symlink(source_path("shapes-demo"), dir + "/shapes-demo");
    std::filesystem::create_directory_symlink(source_path("tests/data"), dir + "/tests/data");
    const std::string bin_dir = std::filesystem::path(POLYSTOKES_CLI).parent_path().string();
    r.resolved_cli = trimmed(run_shell("command -v polystokes", dir, bin_dir).out);

    const auto start = std::chrono::steady_clock::now();
    const auto read_excerpts_due = [&](size_t steps_done) {
      for (size_t k = 0; k < r.tutorial.excerpts.size(); ++k) {
        const Excerpt& excerpt = r.tutorial.excerpts[k];
        const char* file = excerpt_file(excerpt);
        if (excerpt.steps_before == steps_done && file) r.excerpt_files[k] = read_bytes(dir + "/" + file);
      }
    };
    r.excerpt_files.resize(r.tutorial.excerpts.size());
    read_excerpts_due(0);
    for (const Step& step : r.tutorial.steps) {
      StepRun step_run;
      const std::vector<std::string> outputs = output_paths(step.command);
      step_run.outputs_before = snapshot(outputs, dir);
      step_run.shell = run_shell(step.command, dir, bin_dir);
      step_run.outputs_after = snapshot(outputs, dir);
      r.runs.push_back(step_run);
      read_excerpts_due(r.runs.size());
    }
    r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    std::filesystem::remove_all(dir);  // everything the checks need is captured above
    return r;
  }();
  return run;
}

std::string step_label(const Step& step) {
  return "docs/tutorial.md line " + std::to_string(step.line) + ": " + step.command;
}

}  // namespace

TEST_CASE(
    "tutorial extraction: prompts, backslash continuations, `echo $?` codes, scripts, excerpts and `...`",
    "[tutorial]") {
  // The reading conventions of docs/tutorial.md itself, on a small sample in the same form.
  const Tutorial sample = read_tutorial(
      "Intro\n```\nbash scripts/setup.sh build\nmkdir -p out\n```\n"
      "```\n$ polystokes a \\\n    --b c\nfirst line\n  ...\n$ echo $?\n2\n$ polystokes d\n```\n"
      "```\npolystokes -q e \\\n  -o out/f.txt\n{ echo g; } > out/h\n```\n"
      "```\n[coefficients]\n0 0 1\n```\n");
  CHECK(sample.problems.empty());
  REQUIRE(sample.steps.size() == 3);
  CHECK(sample.steps[0].command == "polystokes a --b c");
  CHECK(sample.steps[0].shown == std::vector<std::string>{"first line", "  ..."});
  CHECK(sample.steps[0].stated_exit == 2);
  CHECK(sample.steps[0].line == 7);
  CHECK(sample.steps[1].command == "polystokes d");
  CHECK(!sample.steps[1].stated_exit);
  CHECK(sample.steps[2].command == "polystokes -q e -o out/f.txt\n{ echo g; } > out/h\n");
  CHECK(!sample.steps[2].prompted);
  CHECK(output_paths(sample.steps[2].command) == std::vector<std::string>{"out/f.txt"});
  REQUIRE(sample.excerpts.size() == 1);
  CHECK(sample.excerpts[0].steps_before == 3);
  CHECK(sample.setup_blocks.size() == 1);
  CHECK(!read_tutorial("```\n$ echo $?\n0\n```\n").problems.empty());

  CHECK(shows("mesh a (sha256 4d9c...)", "mesh a (sha256 4d9c3bf5)"));
  CHECK(!shows("mesh a (sha256 4d9c...)", "mesh a (sha256 4d9d3bf5)"));
  CHECK(shows("...", "anything"));
  CHECK(shows("x ... y ... z", "x 1 y 2 z"));
  // Numbers: rounding-level digits and noise below 1e-9 of the line's largest number do not count.
  CHECK(shows("com (-2.38e-13, -219.13945757662023, 1.6e-14) m",
              "com (7.1e-14, -219.13945757662017, -3e-15) m"));
  CHECK(!shows("com (-2.38e-13, -219.1394, 1.6e-14) m", "com (7.1e-14, -219.1494, -3e-15) m"));
  CHECK(!shows("n 2 0", "n 2 1"));
  CHECK(!shows("x ... y ... z", "x 1 z 2 y"));
  CHECK(!shows("ab...ba", "aba"));
  CHECK(!shows("check closed ok", "check closed FAILED"));
  // Padding that follows a number's printed width: a last digit that differs between builds moves the
  // columns.
  CHECK(shows("C(4,2)  A     -0.01950059843827595 B  -0.0195006",
              "C(4,2)  A    -0.019500598438275948 B  -0.0195006"));
  CHECK(!shows("n 2  0", "n 20"));
}

TEST_CASE("docs/tutorial.md: every code block is a step, an excerpt with a known file, or the set-up",
          "[tutorial]") {
  const std::string markdown = read_bytes(source_path("docs/tutorial.md"));
  const Tutorial tutorial = read_tutorial(markdown);
  CAPTURE(tutorial.problems);
  CHECK(tutorial.problems.empty());
  CHECK(tutorial.setup_blocks.size() == 1);
  // Every `$ polystokes` prompt of the markdown became a step (none lost inside an unrecognised block).
  const std::regex prompt_line("^\\$ polystokes ");
  size_t prompts = 0;
  std::istringstream in(markdown);
  for (std::string line; std::getline(in, line);) prompts += std::regex_search(line, prompt_line);
  const size_t polystokes_steps =
      std::count_if(tutorial.steps.begin(), tutorial.steps.end(),
                    [](const Step& s) { return s.prompted && starts_with(s.command, "polystokes "); });
  CHECK(polystokes_steps == prompts);
  CHECK(prompts > 0);
  for (const Excerpt& excerpt : tutorial.excerpts) {
    CAPTURE(excerpt.line, excerpt.lines.front());
    CHECK(excerpt_file(excerpt) != nullptr);
  }
  for (const ExpectedExit& e : exit_table) {
    CAPTURE(e.fragment);
    CHECK(std::count_if(tutorial.steps.begin(), tutorial.steps.end(), [&](const Step& s) {
            return s.command.find(e.fragment) != std::string::npos && !s.stated_exit;
          }) == 1);
  }
  // The codes of the table above come from the conventions the tutorial itself states in step 0.
  CHECK(markdown.find("1 usage error") != std::string::npos);
  CHECK(markdown.find("2 bad input") != std::string::npos);
}

// One test case, so that the tutorial runs once per process (ctest starts one per case).
TEST_CASE("docs/tutorial.md run in order: exit codes (README/--help), shown output and excerpts, failed runs",
          "[tutorial]") {
  const TutorialRun& run = tutorial_run();
  REQUIRE(run.runs.size() == run.tutorial.steps.size());

  SECTION("each command exits 0, or with the code the tutorial states") {
    {
      // The steps must use the polystokes just built, as step 0's PATH line makes them.
      CAPTURE(run.resolved_cli);
      REQUIRE(!run.resolved_cli.empty());
      CHECK(std::filesystem::equivalent(run.resolved_cli, POLYSTOKES_CLI));
    }
    for (size_t k = 0; k < run.runs.size(); ++k) {
      const Step& step = run.tutorial.steps[k];
      const ShellResult& shell = run.runs[k].shell;
      INFO(step_label(step));
      INFO("stdout:\n" << shell.out << "stderr:\n" << shell.err);
      CHECK(shell.exit_code == expected_exit(step));
    }
    if (run.seconds > 20) {
      size_t slowest = 0;
      for (size_t k = 0; k < run.runs.size(); ++k)
        if (run.runs[k].shell.seconds > run.runs[slowest].shell.seconds) slowest = k;
      WARN("the tutorial took " << run.seconds << " s; slowest step " << run.runs[slowest].shell.seconds
                                << " s: " << step_label(run.tutorial.steps[slowest]));
    }
  }

  SECTION("the output lines it shows are in the real output, and output shown unshortened is whole") {
    // "the outputs are real, shortened where marked `...`": every shown line but the volatile ones above is
    // compared literally (trimmed); output shown without a `...` line must have no further lines.
    for (size_t k = 0; k < run.runs.size(); ++k) {
      const Step& step = run.tutorial.steps[k];
      if (!step.prompted) continue;
      const ShellResult& shell = run.runs[k].shell;
      std::vector<std::string> real = real_lines(shell.out);
      const std::vector<std::string> err = real_lines(shell.err);
      real.insert(real.end(), err.begin(), err.end());
      bool shortened = false;
      size_t shown_lines = 0;
      std::vector<std::string> not_in_output;
      for (const std::string& line : step.shown) {
        if (trimmed(line).empty()) continue;
        ++shown_lines;
        if (trimmed(line) == "...") {
          shortened = true;
          continue;
        }
        if (!any_shows(pattern_for(line), real)) not_in_output.push_back(pattern_for(line));
      }
      INFO(step_label(step));
      INFO("real output:\n" << shell.out << shell.err);
      CAPTURE(not_in_output);
      CHECK(not_in_output.empty());
      // A newcomer sees every line a command prints, the confusing ones too: no output is shortened.
      CHECK_FALSE(shortened);
      CHECK(real.size() == shown_lines);
    }
  }

  SECTION("the file excerpts it shows are in the files the steps before them wrote") {
    for (size_t k = 0; k < run.tutorial.excerpts.size(); ++k) {
      const Excerpt& excerpt = run.tutorial.excerpts[k];
      const char* file = excerpt_file(excerpt);
      if (!file) continue;  // reported by the block classification case
      INFO("docs/tutorial.md line " << excerpt.line << ": excerpt of " << file);
      const std::vector<std::string> real = real_lines(run.excerpt_files[k]);
      REQUIRE(!real.empty());
      std::vector<std::string> not_in_file;
      for (const std::string& line : excerpt.lines)
        if (!trimmed(line).empty() && trimmed(line) != "..." && !any_shows(trimmed(line), real))
          not_in_file.push_back(trimmed(line));
      CAPTURE(not_in_file);
      CHECK(not_in_file.empty());
    }
  }

  SECTION("a failing step leaves its -o output as it was (A failed run never touches an existing output)") {
    size_t checked = 0;
    for (size_t k = 0; k < run.runs.size(); ++k) {
      const Step& step = run.tutorial.steps[k];
      if (expected_exit(step) == 0) continue;
      INFO(step_label(step));
      for (size_t f = 0; f < run.runs[k].outputs_before.size(); ++f) {
        const auto& [path, before] = run.runs[k].outputs_before[f];
        CAPTURE(path, before.has_value());
        CHECK(run.runs[k].outputs_after[f].second == before);
        ++checked;
      }
    }
    // Not vacuous: the tutorial aims failing runs at out/varnek.txt, written in step 2.
    CHECK(checked > 0);
  }
}
