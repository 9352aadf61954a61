// libFuzzer target: arbitrary bytes as a mesh file of one format (POLYSTOKES_FUZZ_EXTENSION, and
// POLYSTOKES_FUZZ_FORMAT for a format chosen by name only) through read_mesh. Every outcome but a mesh or a
// polystokes::Error is a finding (crash, sanitizer report, other exception, hang, allocation beyond the
// limit).
#include <unistd.h>

#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <string>

#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"

#ifndef POLYSTOKES_FUZZ_EXTENSION
#error "define POLYSTOKES_FUZZ_EXTENSION, e.g. \".off\""
#endif
#ifndef POLYSTOKES_FUZZ_FORMAT
#define POLYSTOKES_FUZZ_FORMAT ""
#endif

namespace {

// The readers take a path (the format is chosen by extension), so each input goes through one file in a
// private directory, removed when the fuzzer exits normally.
struct InputFile {
  std::string directory;
  std::string path;
  InputFile() {
    const char* base = std::getenv("TMPDIR");
    std::string pattern = std::string(base && *base ? base : "/tmp") + "/polystokes-fuzz-XXXXXX";
    if (!::mkdtemp(pattern.data())) std::abort();
    directory = pattern;
    path = directory + "/input" POLYSTOKES_FUZZ_EXTENSION;
  }
  ~InputFile() {
    ::unlink(path.c_str());
    ::rmdir(directory.c_str());
  }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static InputFile input;
  {
    std::ofstream out(input.path, std::ios::binary | std::ios::trunc);
    out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
    if (!out) std::abort();
  }
  try {
    polystokes::MeshReadOptions options;
    options.format = POLYSTOKES_FUZZ_FORMAT;
    const polystokes::Mesh mesh = polystokes::read_mesh(input.path, options);
    // What the reader returns must be usable as it promises: every face index names a vertex.
    if (mesh.faces.size() > 0 && (mesh.faces.minCoeff() < 0 || mesh.faces.maxCoeff() >= mesh.vertices.rows()))
      std::abort();
  } catch (const polystokes::Error&) {
    // A clean refusal is the expected outcome for most inputs.
  }
  return 0;
}
