#include "io/mesh_preflight.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <fmt/format.h>
#include <limits>
#include <optional>
#include <string_view>
#include <vector>

#include "polystokes/core/errors.h"
#include "internal/memory_budget.h"

namespace polystokes {
namespace {

// The scanners below follow how CGAL 5.5's OFF and PLY readers consume their input (File_header_OFF_impl.h,
// File_scanner_OFF.h, OFF.h, PLY_reader.h), so that they see the same counts and records the readers will
// act on. Where a reader would fail cleanly by itself, the scan just stops and leaves the verdict to it.

bool is_space(char c) { return std::isspace(static_cast<unsigned char>(c)) != 0; }

/// A read position in the file bytes with the few ways the readers move through text.
class Cursor {
 public:
  explicit Cursor(std::string_view text, size_t pos = 0) : text_(text), pos_(pos) {}
  bool at_end() const { return pos_ >= text_.size(); }
  size_t position() const { return pos_; }
  size_t remaining() const { return at_end() ? 0 : text_.size() - pos_; }
  char peek() const { return text_[pos_]; }
  char get() { return text_[pos_++]; }
  /// Moves `count` bytes on (at most to the end).
  void advance(size_t count) { pos_ += std::min(count, remaining()); }
  void skip_space() {
    while (!at_end() && is_space(peek())) ++pos_;
  }
  /// Through the end of the line, the newline included.
  void skip_line() {
    while (!at_end() && get() != '\n') {
    }
  }
  /// CGAL's skip_comment_OFF: whitespace, then any number of '#' lines.
  void skip_off_comments() {
    skip_space();
    while (!at_end() && peek() == '#') {
      skip_line();
      skip_space();
    }
  }
  /// std::getline: up to the newline, which is consumed.
  std::string_view line() {
    const size_t start = pos_;
    while (!at_end() && peek() != '\n') ++pos_;
    const std::string_view result = text_.substr(start, pos_ - start);
    if (!at_end()) ++pos_;
    return result;
  }
  /// The next whitespace-separated token (empty at the end).
  std::string_view token() {
    skip_space();
    const size_t start = pos_;
    while (!at_end() && !is_space(peek())) ++pos_;
    return text_.substr(start, pos_ - start);
  }
  /// `in >> int`: whitespace, an optional sign and digits; nullopt where the stream would fail.
  std::optional<long long> integer(long long low, long long high) {
    skip_space();
    const size_t start = pos_;
    if (!at_end() && (peek() == '+' || peek() == '-')) ++pos_;
    const size_t digits = pos_;
    while (!at_end() && std::isdigit(static_cast<unsigned char>(peek()))) ++pos_;
    if (pos_ == digits) return std::nullopt;
    long long value = 0;
    const char* first = text_.data() + start + (text_[start] == '+' ? 1 : 0);
    const auto [end, ec] = std::from_chars(first, text_.data() + pos_, value);
    if (ec != std::errc() || value < low || value > high) return std::nullopt;
    return value;
  }
  /// `stream >> number` as libstdc++ does it: whitespace, then the longest prefix in integer syntax
  /// ([+-]digits) or floating-point syntax ([+-]digits[.digits][e[+-]digits]); the rest of a token is left for
  /// the next read. nullopt where no digit follows (the extraction fails).
  std::optional<double> extract(bool integer) {
    skip_space();
    const size_t start = pos_;
    auto digits = [&] {
      size_t count = 0;
      for (; !at_end() && std::isdigit(static_cast<unsigned char>(peek())); ++pos_) ++count;
      return count;
    };
    if (!at_end() && (peek() == '+' || peek() == '-')) ++pos_;
    size_t mantissa = digits();
    if (!integer) {
      if (!at_end() && peek() == '.') {
        ++pos_;
        mantissa += digits();
      }
      if (mantissa > 0 && !at_end() && (peek() == 'e' || peek() == 'E')) {
        const size_t before = pos_;
        ++pos_;
        if (!at_end() && (peek() == '+' || peek() == '-')) ++pos_;
        if (digits() == 0) pos_ = before;
      }
    }
    if (mantissa == 0) return std::nullopt;
    std::string_view number = text_.substr(start, pos_ - start);
    if (number[0] == '+') number.remove_prefix(1);
    double value = 0;
    const auto [end, ec] = std::from_chars(number.data(), number.data() + number.size(), value);
    if (ec == std::errc::result_out_of_range) return number[0] == '-' ? -HUGE_VAL : HUGE_VAL;
    return value;
  }
  /// Four bytes as a big-endian int32 (CGAL I_Binary_read_big_endian_integer32); nullopt past the end.
  std::optional<std::int32_t> big_endian_int32() {
    if (remaining() < 4) return std::nullopt;
    std::uint32_t value = 0;
    for (int k = 0; k < 4; ++k) value = value << 8 | static_cast<unsigned char>(get());
    return static_cast<std::int32_t>(value);
  }

 private:
  std::string_view text_;
  size_t pos_;
};

/// Numbers at the start of a line as `istringstream >> double` reads them, up to the first that does not parse.
std::vector<double> line_numbers(std::string_view line) {
  std::vector<double> numbers;
  Cursor cursor(line);
  for (std::string_view token = cursor.token(); !token.empty(); token = cursor.token()) {
    if (token.size() > 1 && token[0] == '+') token.remove_prefix(1);
    double value = 0;
    const auto [end, ec] = std::from_chars(token.data(), token.data() + token.size(), value);
    if (ec != std::errc() || !std::isfinite(value)) break;
    numbers.push_back(value);
    if (end != token.data() + token.size()) break;
  }
  return numbers;
}

bool is_whole(double value, double low, double high) {
  return std::isfinite(value) && value == std::floor(value) && value >= low && value <= high;
}

[[noreturn]] void refuse(const std::string& path, const std::string& problem) { throw format_error(path, 0, problem); }

// ---- OFF ----

struct OffHeader {
  bool readable = false;  ///< false: a header the reader refuses by itself
  bool binary = false;
  std::string keyword;    ///< e.g. "OFF", "NOFF", "COFF", "SKEL"
  bool colours = false, textures = false, normals = false, homogeneous = false, dimensional = false, skel = false;
  long long vertices = 0, faces = 0, edges = 0;
  size_t data_start = 0;
};

OffHeader off_header(std::string_view bytes) {
  OffHeader header;
  Cursor in(bytes);
  in.skip_off_comments();
  if (in.at_end()) return header;
  // The keyword: a run of letters and digits; the character ending it is consumed.
  while (!in.at_end() && header.keyword.size() < 41) {
    const char c = in.get();
    if (!std::isalnum(static_cast<unsigned char>(c))) break;
    header.keyword += c;
  }
  const std::string& k = header.keyword;
  if (k.size() < 2 || (std::isdigit(static_cast<unsigned char>(k[0])) && k[0] != '4') ||
      std::isdigit(static_cast<unsigned char>(k[1])))
    return header;
  size_t j = 0;
  if (k.compare(j, 2, "ST") == 0) header.textures = true, j += 2;
  if (j < k.size() && k[j] == 'C') header.colours = true, ++j;
  if (j < k.size() && k[j] == 'N') header.normals = true, ++j;
  if (j < k.size() && k[j] == '4') header.homogeneous = true, ++j;
  if (j < k.size() && k[j] == 'n') header.dimensional = true, ++j;
  if (k.substr(j) == "SKEL") {
    header.skel = true;
  } else if (k.substr(j) != "OFF") {
    return header;
  }
  in.skip_off_comments();
  if (in.at_end()) return header;
  long long first = 0;
  if (std::isdigit(static_cast<unsigned char>(in.peek()))) {
    const auto n = in.integer(INT32_MIN, INT32_MAX);
    if (!n) return header;
    first = *n;
  } else {
    std::string word;
    char c = 0;
    while (!in.at_end() && word.size() < 41) {
      c = in.get();
      if (!std::isalnum(static_cast<unsigned char>(c))) break;
      word += c;
    }
    if (word != "BINARY") return header;
    header.binary = true;
    if (c != '\n') in.skip_line();
  }
  if (header.binary) {
    auto a = in.big_endian_int32();
    if (a && header.dimensional) a = in.big_endian_int32();
    const auto b = in.big_endian_int32();
    if (!a || !b) return header;
    if (!header.skel) {
      const auto c = in.big_endian_int32();
      if (!c) return header;
      header.edges = *c;
    }
    header.vertices = *a;
    header.faces = *b;
  } else {
    header.vertices = first;
    if (header.dimensional) {
      const auto n = in.integer(INT32_MIN, INT32_MAX);
      if (!n) return header;
      header.vertices = *n;
    }
    const auto faces = in.integer(INT32_MIN, INT32_MAX);
    if (!faces) return header;
    header.faces = *faces;
    if (!header.skel) {
      const auto edges = in.integer(INT32_MIN, INT32_MAX);
      if (!edges) return header;
      header.edges = *edges;
    }
  }
  header.data_start = in.position();
  header.readable = header.faces >= 0;  // the reader refuses a negative face count itself
  return header;
}

MeshFileCounts off_counts(const OffHeader& header) {
  MeshFileCounts counts;
  if (!header.readable) return counts;
  counts.vertices = header.vertices;
  counts.faces = header.faces;
  // ASCII: a vertex line holds at least three numbers, a face line at least its count; binary: three
  // 4-byte coordinates per vertex and a 4-byte count per face.
  const double per_vertex = header.binary ? 12.0 : 6.0;
  const double per_face = header.binary ? 4.0 : 2.0;
  counts.minimum_bytes = static_cast<double>(header.data_start) +
                         per_vertex * static_cast<double>(std::max(0LL, header.vertices)) +
                         per_face * static_cast<double>(header.faces) - 1.0;
  return counts;
}

void check_off_records(const std::string& path, std::string_view bytes, const OffHeader& header) {
  if (header.colours || header.textures)
    refuse(path, fmt::format("OFF variant '{}' with colours or texture coordinates is not supported (its reader "
                             "trusts those values unchecked); write plain OFF",
                             header.keyword));
  if (header.binary && (header.normals || header.homogeneous || header.dimensional || header.skel))
    refuse(path, fmt::format("binary OFF variant '{}' is not supported; write plain OFF", header.keyword));
  Cursor in(bytes, header.data_start);
  const long long vertices = header.vertices;
  if (header.binary) {
    // A count read past the end is left uninitialized by the reader and, with the stream at its end, still
    // used to size the face: the file must hold every count.
    if (in.remaining() < 12 * static_cast<size_t>(vertices))
      refuse(path, fmt::format("the file ends inside the {} binary vertices", vertices));
    in.advance(12 * static_cast<size_t>(vertices));
    for (long long f = 0; f < header.faces; ++f) {
      const auto size = in.big_endian_int32();
      if (!size) refuse(path, fmt::format("the file ends before binary face {} of {}", f + 1, header.faces));
      if (*size < 0 || 4.0 * *size > static_cast<double>(in.remaining()))
        refuse(path, fmt::format("binary face {} declares {} vertices, more than the rest of the file holds", f + 1,
                                 *size));
      // read_OFF reads no trailing colour count after a binary face (it would only for colour variants).
      in.advance(4 * static_cast<size_t>(*size));
    }
    return;
  }
  for (long long v = 0; v < vertices; ++v) {
    in.skip_off_comments();
    if (in.at_end()) return;
    in.line();
  }
  for (long long f = 0; f < header.faces; ++f) {
    in.skip_off_comments();
    if (in.at_end()) return;
    std::string_view line = in.line();
    line = line.substr(0, line.find('#'));
    const std::vector<double> numbers = line_numbers(line);
    if (numbers.empty()) return;
    const double indices = static_cast<double>(numbers.size() - 1);
    if (!is_whole(numbers[0], 0, indices))
      refuse(path, fmt::format("face {}: the line declares {} vertices but holds {} indices", f + 1, numbers[0],
                               numbers.size() - 1));
    // The reader converts each index to size_t, which is defined for whole numbers in [0, 2^64) only; an
    // index past the last vertex it refuses by itself.
    const size_t size = static_cast<size_t>(numbers[0]);
    for (size_t i = 1; i <= size; ++i)
      if (!is_whole(numbers[i], 0, 0x1p64 - 0x1p12))
        refuse(path, fmt::format("face {}: vertex index {} is not a whole number >= 0", f + 1, numbers[i]));
  }
}

// ---- PLY ----

enum class PlyFormat { ascii, little_endian, big_endian };

struct PlyProperty {
  std::string name;
  bool list = false;
  std::string type;        ///< scalar type, or the list's element type
  std::string count_type;  ///< lists only
};

struct PlyElement {
  std::string name;
  long long count = 0;
  std::vector<PlyProperty> properties;
};

struct PlyHeader {
  bool readable = false;
  PlyFormat format = PlyFormat::ascii;
  std::vector<PlyElement> elements;
  size_t data_start = 0;
};

/// Bytes of a PLY scalar type (the names CGAL accepts); 0 for a name it ignores.
size_t ply_size(std::string_view type) {
  if (type == "char" || type == "int8" || type == "uchar" || type == "uint8") return 1;
  if (type == "short" || type == "int16" || type == "ushort" || type == "uint16") return 2;
  if (type == "int" || type == "int32" || type == "uint" || type == "uint32" || type == "float" || type == "float32")
    return 4;
  if (type == "double" || type == "float64") return 8;
  return 0;
}

bool ply_float(std::string_view type) {
  return type == "float" || type == "float32" || type == "double" || type == "float64";
}

bool ply_signed(std::string_view type) {
  return type == "char" || type == "int8" || type == "short" || type == "int16" || type == "int" || type == "int32";
}

/// Largest value of an integer PLY type.
double ply_max(std::string_view type) {
  const size_t bytes = ply_size(type);
  return std::ldexp(1.0, int(8 * bytes) - (ply_signed(type) ? 1 : 0)) - 1.0;
}

PlyHeader ply_header(const std::string& path, std::string_view bytes, bool strict) {
  PlyHeader header;
  Cursor in(bytes);
  for (long line_number = 1;; ++line_number) {
    if (in.at_end()) {
      // The reader then reads the data from a spent stream, where a list length comes out uninitialized.
      if (strict && line_number > 2) refuse(path, "the header has no end_header line");
      return header;
    }
    Cursor line(in.line());
    if (line_number == 1) {
      if (line.token() != "ply") return header;
    } else if (line_number == 2) {
      line.token();
      const std::string_view format = line.token();
      if (line.token().empty()) return header;
      if (format == "ascii") header.format = PlyFormat::ascii;
      else if (format == "binary_little_endian") header.format = PlyFormat::little_endian;
      else if (format == "binary_big_endian") header.format = PlyFormat::big_endian;
      else return header;
    } else {
      const std::string_view keyword = line.token();
      if (keyword.empty()) return header;
      if (keyword == "property") {
        PlyProperty property;
        std::string_view type = line.token(), name = line.token();
        if (name.empty()) return header;
        if (type == "list") {
          property.list = true;
          property.count_type = std::string(name);
          type = line.token();
          name = line.token();
          if (name.empty()) return header;
          // The reader ignores lists with an unknown or floating-point length type.
          if (ply_size(property.count_type) == 0 || ply_float(property.count_type) || ply_size(type) == 0) continue;
        } else if (ply_size(type) == 0) {
          continue;
        }
        property.type = std::string(type);
        property.name = std::string(name);
        if (header.elements.empty()) {
          if (strict) refuse(path, fmt::format("line {}: property before any element", line_number));
          return header;
        }
        header.elements.back().properties.push_back(property);
      } else if (keyword == "element") {
        PlyElement element;
        element.name = std::string(line.token());
        const std::string_view count = line.token();
        long long value = -1;
        const auto [end, ec] = std::from_chars(count.data(), count.data() + count.size(), value);
        if (count.empty() || ec != std::errc() || value < 0 || end != count.data() + count.size()) {
          if (strict)
            refuse(path, fmt::format("line {}: element '{}' count '{}' is not a non-negative integer", line_number,
                                     element.name, count));
          return header;
        }
        element.count = value;
        header.elements.push_back(element);
      } else if (keyword == "end_header") {
        break;
      }
    }
  }
  header.data_start = in.position();
  header.readable = true;
  return header;
}

/// The reader fetches some properties by name with a fixed type and does not check the type first (CGAL 5.5
/// PLY_element::assign): coordinates must be float or double, colours uchar, half-edge ends uint and
/// texture coordinates float. Anything else is refused rather than read through a null pointer.
void check_ply_property_types(const std::string& path, const PlyHeader& header) {
  for (const PlyElement& element : header.elements) {
    const bool vertex = element.name == "vertex" || element.name == "vertices";
    const bool face = element.name == "face" || element.name == "faces";
    const bool halfedge = element.name == "halfedge";
    for (const PlyProperty& property : element.properties) {
      const std::string& n = property.name;
      const std::string& t = property.type;
      const char* required = nullptr;
      if (vertex && (n == "x" || n == "y" || n == "z") && (property.list || !ply_float(t)))
        required = "float or double";
      else if ((vertex || face) && (n == "red" || n == "green" || n == "blue" || n == "r" || n == "g" || n == "b") &&
               (property.list || (t != "uchar" && t != "uint8")))
        required = "uchar";
      else if (halfedge && (n == "source" || n == "target") && (property.list || (t != "uint" && t != "uint32")))
        required = "uint";
      else if (halfedge && (n == "u" || n == "v") && (property.list || (t != "float" && t != "float32")))
        required = "float";
      if (required)
        refuse(path, fmt::format("property '{}' of element '{}' has type {}{}; the reader needs {}", n, element.name,
                                 property.list ? "list of " : "", t, required));
    }
  }
}

MeshFileCounts ply_counts(const PlyHeader& header) {
  MeshFileCounts counts;
  if (!header.readable) return counts;
  double minimum = 0;
  for (const PlyElement& element : header.elements) {
    double item = 0;
    for (const PlyProperty& property : element.properties)
      item += header.format == PlyFormat::ascii ? 2.0 : static_cast<double>(ply_size(property.list ? property.count_type
                                                                                                  : property.type));
    minimum += item * static_cast<double>(element.count);
    if (element.name == "vertex") counts.vertices = element.count;
    if (element.name == "face") counts.faces = element.count;
  }
  counts.minimum_bytes = static_cast<double>(header.data_start) + minimum - (header.format == PlyFormat::ascii ? 1 : 0);
  return counts;
}

/// One binary value of a PLY type as a double; nullopt past the end of the file.
std::optional<double> ply_binary_value(Cursor& in, const std::string& type, bool big_endian) {
  const size_t size = ply_size(type);
  if (in.remaining() < size) return std::nullopt;
  unsigned char raw[8];
  for (size_t k = 0; k < size; ++k) raw[big_endian ? size - 1 - k : k] = static_cast<unsigned char>(in.get());
  if (type == "float" || type == "float32") {
    float f;
    std::memcpy(&f, raw, 4);
    return f;
  }
  if (type == "double" || type == "float64") {
    double d;
    std::memcpy(&d, raw, 8);
    return d;
  }
  std::uint64_t bits = 0;
  for (size_t k = 0; k < size; ++k) bits |= std::uint64_t(raw[k]) << (8 * k);
  if (ply_signed(type) && (bits >> (8 * size - 1)) != 0) return static_cast<double>(bits) - std::ldexp(1.0, int(8 * size));
  return static_cast<double>(bits);
}

void check_ply_records(const std::string& path, std::string_view bytes, const PlyHeader& header) {
  Cursor in(bytes, header.data_start);
  const bool ascii = header.format == PlyFormat::ascii;
  const double file_size = static_cast<double>(bytes.size());
  for (const PlyElement& element : header.elements) {
    if (static_cast<double>(element.count) > file_size)
      refuse(path, fmt::format("element '{}' declares {} items, more than the file has bytes", element.name,
                               element.count));
    for (long long item = 0; item < element.count; ++item) {
      for (const PlyProperty& property : element.properties) {
        const std::string& count_type = property.list ? property.count_type : property.type;
        // A list length read at the end of the file is left uninitialized by the reader (an extraction
        // from a spent stream does not assign) and then used to size the list, so it must be present.
        const auto truncated = [&] {
          refuse(path, fmt::format("the file ends inside item {} of element '{}', before a list length", item + 1,
                                   element.name));
        };
        double value = 0;
        if (ascii) {
          in.skip_space();
          if (in.at_end()) {
            if (property.list) truncated();
            return;
          }
          const auto read = in.extract(!ply_float(count_type));
          if (!read) return;  // the extraction fails, and so does the reader
          if (!property.list) continue;
          value = *read;
        } else {
          const auto read = ply_binary_value(in, count_type, header.format == PlyFormat::big_endian);
          if (!read) {
            if (property.list) truncated();
            return;
          }
          if (!property.list) continue;
          value = *read;
        }
        const double room = ascii ? (static_cast<double>(in.remaining()) + 1.0) / 2.0
                                  : static_cast<double>(in.remaining()) / static_cast<double>(ply_size(property.type));
        const double limit = std::min(room, ply_max(count_type));
        if (!is_whole(value, 0, limit))
          refuse(path, fmt::format("item {} of element '{}': list length {} is not a whole number between 0 and {:.0f} "
                                   "(what its type and the rest of the file allow)",
                                   item + 1, element.name, value, limit));
        if (!ascii) {
          in.advance(static_cast<size_t>(value) * ply_size(property.type));
          continue;
        }
        for (long long k = 0; k < static_cast<long long>(value); ++k)
          if (!in.extract(!ply_float(property.type))) return;
      }
    }
  }
}

// ---- OBJ and STL ----

/// Records counted by the first word of each line: OBJ "v" and "f", ASCII STL "facet" (three vertices each).
MeshFileCounts line_counts(std::string_view bytes, bool obj) {
  long long vertices = 0, faces = 0;
  for (size_t pos = 0; pos < bytes.size();) {
    size_t end = bytes.find('\n', pos);
    if (end == std::string_view::npos) end = bytes.size();
    size_t i = pos;
    while (i < end && (bytes[i] == ' ' || bytes[i] == '\t')) ++i;
    const std::string_view rest = bytes.substr(i, end - i);
    auto starts = [&](std::string_view word) {
      return rest.size() > word.size() && rest.substr(0, word.size()) == word &&
             (rest[word.size()] == ' ' || rest[word.size()] == '\t');
    };
    if (obj) {
      vertices += starts("v");
      faces += starts("f");
    } else if (starts("facet")) {
      ++faces;
      vertices += 3;
    }
    pos = end + 1;
  }
  MeshFileCounts counts;
  counts.vertices = vertices;
  counts.faces = faces;
  return counts;
}

MeshFileCounts stl_counts(std::string_view bytes) {
  if (bytes.size() >= 84) {
    std::uint32_t facets = 0;
    std::memcpy(&facets, bytes.data() + 80, 4);
    if (bytes.size() == 84 + 50 * static_cast<std::uint64_t>(facets)) {
      MeshFileCounts counts;
      counts.faces = facets;
      counts.vertices = 3 * static_cast<long long>(facets);
      counts.minimum_bytes = static_cast<double>(bytes.size());
      return counts;
    }
  }
  return line_counts(bytes, false);
}

}  // namespace

MeshFileCounts mesh_file_counts(const std::string& bytes, const std::string& extension) {
  if (extension == ".off") return off_counts(off_header(bytes));
  if (extension == ".ply") return ply_counts(ply_header("", bytes, false));
  if (extension == ".obj") return line_counts(bytes, true);
  if (extension == ".stl") return stl_counts(bytes);
  return {};
}

double mesh_read_bytes(double file_size, const MeshFileCounts& counts) {
  const double vertices = static_cast<double>(std::max(0LL, counts.vertices));
  const double faces = static_cast<double>(std::max(0LL, counts.faces));
  return 3.0 * file_size + 200.0 * vertices + 250.0 * faces;
}

void check_mesh_file(const std::string& path, const std::string& bytes, const std::string& extension) {
  MeshFileCounts counts;
  if (extension == ".off") {
    const OffHeader header = off_header(bytes);
    if (header.readable && header.vertices < 0)
      refuse(path, fmt::format("the header declares a negative number of vertices ({})", header.vertices));
    // The header reader doubles the edge count and estimates 2.1 (V + F + 10) half-edges in an int.
    if (header.readable && std::abs(header.edges) > (1LL << 30))
      refuse(path, fmt::format("the header's edge count {} is out of range", header.edges));
    counts = off_counts(header);
    if (counts.minimum_bytes > static_cast<double>(bytes.size()))
      refuse(path, fmt::format("the header declares {} vertices and {} faces, which need at least {:.0f} bytes, but "
                               "the file has only {}",
                               counts.vertices, counts.faces, counts.minimum_bytes, bytes.size()));
    if (header.readable && header.vertices + header.faces > 1'000'000'000)
      throw ResourceError(fmt::format("{}: {} vertices and {} faces are more than the OFF reader can count (10^9 "
                                      "together)",
                                      path, header.vertices, header.faces));
    if (header.readable) check_off_records(path, bytes, header);
  } else if (extension == ".ply") {
    const PlyHeader header = ply_header(path, bytes, true);
    check_ply_property_types(path, header);
    counts = ply_counts(header);
    if (counts.minimum_bytes > static_cast<double>(bytes.size()))
      refuse(path, fmt::format("the header declares elements ({} vertices, {} faces) that need at least {:.0f} "
                               "bytes, but the file has only {}",
                               counts.vertices, counts.faces, counts.minimum_bytes, bytes.size()));
    if (header.readable) check_ply_records(path, bytes, header);
  } else {
    counts = mesh_file_counts(bytes, extension);
  }
  require_memory(mesh_read_bytes(static_cast<double>(bytes.size()), counts),
                 fmt::format("{}: reading and checking {} faces", path, std::max(0LL, counts.faces)));
}

}  // namespace polystokes
