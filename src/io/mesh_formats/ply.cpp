// PLY: a text header ("ply", "format ascii|binary_little_endian|binary_big_endian 1.0", "element NAME COUNT",
// "property TYPE NAME", "property list COUNT_TYPE TYPE NAME", "end_header"), then the elements in header
// order, one item a line (ascii) or packed (binary). The mesh is element vertex (x, y, z) and element face
// (list vertex_indices or vertex_index); other elements and properties are read past. P. Bourke, "PLY -
// Polygon File Format", after G. Turk, "The PLY Polygon File Format" (1994) (from memory).
#include <fmt/format.h>

#include <cmath>
#include <cstring>
#include <optional>

#include "io/mesh_format_registry.h"
#include "io/text_scanner.h"

namespace polystokes {
namespace {

enum class PlyType { int8, uint8, int16, uint16, int32, uint32, float32, float64 };

struct TypeName {
  const char* name;
  PlyType type;
};
constexpr TypeName type_names[] = {
    {"char", PlyType::int8},      {"int8", PlyType::int8},       {"uchar", PlyType::uint8},
    {"uint8", PlyType::uint8},    {"short", PlyType::int16},     {"int16", PlyType::int16},
    {"ushort", PlyType::uint16},  {"uint16", PlyType::uint16},   {"int", PlyType::int32},
    {"int32", PlyType::int32},    {"uint", PlyType::uint32},     {"uint32", PlyType::uint32},
    {"float", PlyType::float32},  {"float32", PlyType::float32}, {"double", PlyType::float64},
    {"float64", PlyType::float64}};

std::optional<PlyType> type_of(std::string_view name) {
  for (const auto& entry : type_names)
    if (name == entry.name) return entry.type;
  return std::nullopt;
}

size_t size_of(PlyType type) {
  switch (type) {
    case PlyType::int8:
    case PlyType::uint8:
      return 1;
    case PlyType::int16:
    case PlyType::uint16:
      return 2;
    case PlyType::int32:
    case PlyType::uint32:
    case PlyType::float32:
      return 4;
    case PlyType::float64:
      return 8;
  }
  return 0;
}

bool is_float(PlyType type) { return type == PlyType::float32 || type == PlyType::float64; }
bool is_signed(PlyType type) {
  return type == PlyType::int8 || type == PlyType::int16 || type == PlyType::int32;
}
double highest(PlyType type) {
  return std::ldexp(1.0, int(8 * size_of(type)) - (is_signed(type) ? 1 : 0)) - 1.0;
}

enum class Role { other, x, y, z, indices };

struct Property {
  std::string name;
  std::string type_name;  ///< as written, for messages
  PlyType type = PlyType::float32;
  bool list = false;
  PlyType count_type = PlyType::uint8;
  Role role = Role::other;
};

struct Element {
  std::string name;
  std::int64_t count = 0;
  std::vector<Property> properties;
  bool vertex = false, face = false;
};

enum class Encoding { ascii, little_endian, big_endian };

struct Header {
  Encoding encoding = Encoding::ascii;
  std::vector<Element> elements;
  size_t data_start = 0;
};

/// Header lines; unknown keywords (obj_info and the like) are read past. A property of unknown type is
/// refused after the type checks of the known ones (the first problem a reader of the whole header sees).
Header read_header(TextScanner& in) {
  Header header;
  if (!in.next_line() || in.token() != "ply") in.fail("not a PLY file: the first line is not 'ply'");
  if (!in.next_line() || in.token() != "format") in.fail("the second line is not 'format ENCODING 1.0'");
  const std::string_view encoding = in.token();
  if (encoding == "ascii")
    header.encoding = Encoding::ascii;
  else if (encoding == "binary_little_endian")
    header.encoding = Encoding::little_endian;
  else if (encoding == "binary_big_endian")
    header.encoding = Encoding::big_endian;
  else
    in.fail(fmt::format("unknown PLY encoding '{}'", encoding));
  std::string unknown_type;
  for (;;) {
    if (!in.next_line()) in.fail("the header has no end_header line");
    const std::string_view keyword = in.token();
    if (keyword == "end_header") break;
    if (keyword == "element") {
      Element element;
      element.name = std::string(in.token());
      const std::string_view count = in.token();
      if (!parse_integer_token(count, element.count) || element.count < 0)
        in.fail(fmt::format("element '{}' count '{}' is not a non-negative integer", element.name, count));
      element.vertex = element.name == "vertex";
      element.face = element.name == "face";
      header.elements.push_back(std::move(element));
    } else if (keyword == "property") {
      if (header.elements.empty()) in.fail("property before any element");
      Property property;
      std::string_view type = in.token();
      if (type == "list") {
        property.list = true;
        const std::string_view count_type = in.token();
        const auto counted = type_of(count_type);
        if (!counted || is_float(*counted))
          in.fail(fmt::format("list length type '{}' is not an integer type", count_type));
        property.count_type = *counted;
        type = in.token();
      }
      property.type_name = std::string(type);
      property.name = std::string(in.token());
      if (property.name.empty()) in.fail("property without a name");
      const auto known = type_of(type);
      if (known)
        property.type = *known;
      else if (unknown_type.empty())
        unknown_type = format_error(in.path(), in.line_number(),
                                    fmt::format("property '{}' has unknown type '{}'", property.name, type))
                           .what();
      Element& element = header.elements.back();
      if (element.vertex && !property.list && property.name.size() == 1 &&
          property.name.find_first_of("xyz") == 0)
        property.role = property.name == "x" ? Role::x : property.name == "y" ? Role::y : Role::z;
      if (element.face && property.list &&
          (property.name == "vertex_indices" || property.name == "vertex_index"))
        property.role = Role::indices;
      element.properties.push_back(std::move(property));
    }
  }
  // Coordinates must be floating point (an integer coordinate marks a file meant for another purpose);
  // colours are bytes as every writer stores them.
  for (const Element& element : header.elements)
    for (const Property& property : element.properties) {
      const std::string& n = property.name;
      const char* required = nullptr;
      if (element.vertex && (n == "x" || n == "y" || n == "z") && (property.list || !is_float(property.type)))
        required = "float or double";
      else if ((element.vertex || element.face) &&
               (n == "red" || n == "green" || n == "blue" || n == "r" || n == "g" || n == "b") &&
               (property.list || property.type != PlyType::uint8))
        required = "uchar";
      if (required && type_of(property.type_name))
        throw format_error(
            in.path(), 0,
            fmt::format("property '{}' of element '{}' has type {}{}; the reader needs {}", n, element.name,
                        property.list ? "list of " : "", property.type_name, required));
    }
  if (!unknown_type.empty()) throw FormatError(unknown_type);
  for (const Element& element : header.elements)
    if (element.face)
      for (const Property& property : element.properties)
        if (property.role == Role::indices && is_float(property.type))
          throw format_error(in.path(), 0, "face vertex indices must be of an integer type");
  header.data_start = in.next_offset();
  return header;
}

/// Fewest bytes the declared elements take: a byte and a separator per ascii value, the packed size binary.
double minimum_bytes(const Header& header) {
  double total = 0;
  for (const Element& element : header.elements) {
    double item = 0;
    for (const Property& property : element.properties)
      item += header.encoding == Encoding::ascii
                  ? 2.0
                  : static_cast<double>(size_of(property.list ? property.count_type : property.type));
    total += item * static_cast<double>(element.count);
  }
  return total - (header.encoding == Encoding::ascii ? 1.0 : 0.0);
}

/// What an item's values are delivered to.
struct Sink {
  PolygonSoup& soup;
  std::int64_t vertices = 0;  ///< declared vertex count (indices are checked against it)
  double point[3] = {0, 0, 0};
};

[[noreturn]] void list_length_error(const std::string& where, const Element& element, std::int64_t item,
                                    double value, double limit) {
  throw FormatError(
      fmt::format("{}item {} of element '{}': list length {} is not a whole number between 0 and "
                  "{:.0f} (what its type and the rest of the file allow)",
                  where, item + 1, element.name, value, limit));
}

/// Appends a face's vertex index, or returns the problem (empty when appended).
std::string add_index(const Sink& sink, std::int64_t item, double value) {
  if (!(value >= 0 && value < static_cast<double>(sink.vertices)))
    return fmt::format("face {} refers to vertex {}, but the file has {} vertices", item + 1, value,
                       sink.vertices);
  sink.soup.corners.push_back(static_cast<int>(value));
  return {};
}

void read_ascii(TextScanner& in, const Header& header, Sink& sink) {
  for (const Element& element : header.elements) {
    for (std::int64_t item = 0; item < element.count; ++item) {
      if (!in.next_line()) {
        if (!element.properties.empty() && element.properties[0].list)
          in.fail(fmt::format("the file ends inside item {} of element '{}', before a list length", item + 1,
                              element.name));
        if (!element.properties.empty())
          in.fail(fmt::format("the file ends before item {} of element '{}'", item + 1, element.name));
      }
      for (const Property& property : element.properties) {
        if (in.at_line_end())
          in.fail(fmt::format("item {} of element '{}' ends before property '{}'", item + 1, element.name,
                              property.name));
        double value = in.number("value");
        if (!property.list) {
          if (property.role == Role::x) sink.point[0] = value;
          if (property.role == Role::y) sink.point[1] = value;
          if (property.role == Role::z) sink.point[2] = value;
          continue;
        }
        const double limit = std::min(highest(property.count_type), static_cast<double>(in.tokens_left()));
        if (!(value >= 0 && value <= limit && value == std::floor(value)))
          list_length_error(fmt::format("{}:{}: ", in.path(), in.line_number()), element, item, value, limit);
        const auto length = static_cast<std::int64_t>(value);
        for (std::int64_t k = 0; k < length; ++k) {
          const double entry = in.number("list value");
          if (property.role != Role::indices) continue;
          if (entry != std::floor(entry))
            in.fail(fmt::format("face {}: vertex index {} is not a whole number", item + 1, entry));
          if (const std::string problem = add_index(sink, item, entry); !problem.empty()) in.fail(problem);
        }
        if (property.role == Role::indices) sink.soup.end_polygon();
      }
      if (!in.at_line_end())
        in.expect_line_end(fmt::format("item {} of element '{}'", item + 1, element.name).c_str());
      if (element.vertex) sink.soup.add_vertex(sink.point[0], sink.point[1], sink.point[2]);
    }
  }
}

class BinaryCursor {
 public:
  BinaryCursor(std::string_view bytes, size_t start, bool big_endian)
      : bytes_(bytes), pos_(start), big_endian_(big_endian) {}
  size_t remaining() const { return bytes_.size() - pos_; }
  /// One value as a double; nullopt past the end.
  std::optional<double> value(PlyType type) {
    const size_t size = size_of(type);
    if (remaining() < size) return std::nullopt;
    unsigned char raw[8];
    for (size_t k = 0; k < size; ++k)
      raw[big_endian_ ? size - 1 - k : k] = static_cast<unsigned char>(bytes_[pos_ + k]);
    pos_ += size;
    switch (type) {
      case PlyType::float32: {
        float f;
        std::memcpy(&f, raw, 4);
        return f;
      }
      case PlyType::float64: {
        double d;
        std::memcpy(&d, raw, 8);
        return d;
      }
      default:
        break;
    }
    std::uint64_t bits = 0;
    for (size_t k = 0; k < size; ++k) bits |= std::uint64_t(raw[k]) << (8 * k);
    if (is_signed(type) && (bits >> (8 * size - 1)) != 0)
      return static_cast<double>(bits) - std::ldexp(1.0, int(8 * size));
    return static_cast<double>(bits);
  }

 private:
  std::string_view bytes_;
  size_t pos_;
  bool big_endian_;
};

void read_binary(const std::string& path, std::string_view bytes, const Header& header, Sink& sink) {
  BinaryCursor in(bytes, header.data_start, header.encoding == Encoding::big_endian);
  const std::string where = path + ": ";
  for (const Element& element : header.elements) {
    for (std::int64_t item = 0; item < element.count; ++item) {
      for (const Property& property : element.properties) {
        const auto read = in.value(property.list ? property.count_type : property.type);
        if (!read)
          throw format_error(path, 0,
                             fmt::format("the file ends inside item {} of element '{}'{}", item + 1,
                                         element.name, property.list ? ", before a list length" : ""));
        if (!property.list) {
          if (property.role == Role::x) sink.point[0] = *read;
          if (property.role == Role::y) sink.point[1] = *read;
          if (property.role == Role::z) sink.point[2] = *read;
          continue;
        }
        const double limit = std::min(highest(property.count_type),
                                      static_cast<double>(in.remaining() / size_of(property.type)));
        if (!(*read >= 0 && *read <= limit)) list_length_error(where, element, item, *read, limit);
        const auto length = static_cast<std::int64_t>(*read);
        for (std::int64_t k = 0; k < length; ++k) {
          const double entry = *in.value(property.type);
          if (property.role != Role::indices) continue;
          if (const std::string problem = add_index(sink, item, entry); !problem.empty())
            throw format_error(path, 0, problem);
        }
        if (property.role == Role::indices) sink.soup.end_polygon();
      }
      if (element.vertex) sink.soup.add_vertex(sink.point[0], sink.point[1], sink.point[2]);
    }
  }
}

}  // namespace

void read_ply(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  TextScanner in(bytes, path);
  const Header header = read_header(in);
  const Element* vertex = nullptr;
  const Element* face = nullptr;
  for (const Element& element : header.elements) {
    if ((element.vertex && vertex) || (element.face && face))
      throw format_error(path, 0, fmt::format("the header declares element '{}' twice", element.name));
    if (element.vertex) vertex = &element;
    if (element.face) face = &element;
  }
  const double minimum = static_cast<double>(header.data_start) + minimum_bytes(header);
  if (minimum > static_cast<double>(bytes.size()))
    throw format_error(
        path, 0,
        fmt::format("the header declares elements ({} vertices, {} faces) that need at least {:.0f} "
                    "bytes, but the file has only {}",
                    vertex ? vertex->count : 0, face ? face->count : 0, minimum, bytes.size()));
  // An element without properties takes no bytes, so its count is checked against the file size by itself.
  for (const Element& element : header.elements)
    if (static_cast<double>(element.count) > static_cast<double>(bytes.size()))
      throw format_error(path, 0,
                         fmt::format("element '{}' declares {} items, more than the file has bytes",
                                     element.name, element.count));
  const std::int64_t vertex_count = vertex ? vertex->count : 0;
  if (vertex_count > max_mesh_vertices)
    throw ResourceError(path + ": more vertices than a 32-bit face index can address");
  soup.reserve(vertex_count, face ? face->count : 0, bytes.size() - header.data_start, 6.0, 8.0);
  Sink sink{soup, vertex_count};
  if (header.encoding == Encoding::ascii)
    read_ascii(in, header, sink);
  else
    read_binary(path, bytes, header, sink);

  // What the mesh needs, checked after the data so that a malformed record is reported where it is.
  if (!vertex) throw format_error(path, 0, "no element 'vertex'");
  for (const char* axis : {"x", "y", "z"}) {
    bool found = false;
    for (const Property& property : vertex->properties) found = found || property.name == axis;
    if (!found) throw format_error(path, 0, fmt::format("element 'vertex' has no property '{}'", axis));
  }
  if (face) {
    bool found = false;
    for (const Property& property : face->properties) found = found || property.role == Role::indices;
    if (!found) throw format_error(path, 0, "element 'face' has no list 'vertex_indices'");
  }
}

}  // namespace polystokes
