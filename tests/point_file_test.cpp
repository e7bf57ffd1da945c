// qualify: tests of the command's JSON reader (against RFC 8259) and of the POINT.json reader.
// SPDX-License-Identifier: MIT
#include "point_file.hpp"

#include <doctest/doctest.h>

#include <clocale>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iterator>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "json_read.hpp"
#include "temp_dir.hpp"

using qualify_cli::json_kind;
using qualify_cli::json_value;
using qualify_cli::parse_json;

namespace {

// Parses a copy of `text` in a buffer of exactly its size, so that the sanitizer build catches
// a read one byte past the end (a std::string would have its terminating NUL there).
qualify_cli::json_parse_result parse_exact(std::string_view text,
                                           const qualify_cli::json_read_options& options = {}) {
  std::unique_ptr<char[]> copy(new char[text.size() ? text.size() : 1]);
  std::memcpy(copy.get(), text.data(), text.size());
  return parse_json(std::string_view(copy.get(), text.size()), options);
}

qualify_cli::result<qualify_cli::point_file> read_exact(std::string_view text) {
  std::unique_ptr<char[]> copy(new char[text.size() ? text.size() : 1]);
  std::memcpy(copy.get(), text.data(), text.size());
  return qualify_cli::read_point_json(std::string_view(copy.get(), text.size()));
}

const json_value& member(const json_value& v, std::string_view key) {
  const json_value* m = v.find(key);
  REQUIRE_MESSAGE(m != nullptr, "missing member " << key);
  return *m;
}

// RFC 8259 (Bray, The JavaScript Object Notation (JSON) Data Interchange Format, 2017),
// section 13, the object example.
const std::string rfc_object = R"({
        "Image": {
            "Width":  800,
            "Height": 600,
            "Title":  "View from 15th Floor",
            "Thumbnail": {
                "Url":    "http://www.example.com/image/481989943",
                "Height": 125,
                "Width":  100
            },
            "Animated" : false,
            "IDs": [116, 943, 234, 38793]
          }
      })";

// RFC 8259, section 13, the array example.
const std::string rfc_array = R"([
        {
           "precision": "zip",
           "Latitude":  37.7668,
           "Longitude": -122.3959,
           "Address":   "",
           "City":      "SAN FRANCISCO",
           "State":     "CA",
           "Zip":       "94107",
           "Country":   "US"
        },
        {
           "precision": "zip",
           "Latitude":  37.371991,
           "Longitude": -122.026020,
           "Address":   "",
           "City":      "SUNNYVALE",
           "State":     "CA",
           "Zip":       "94085",
           "Country":   "US"
        }
      ])";

// The example of the README's section on point files (read from README.md, so that the
// documented example stays valid).
std::string readme_point_example() {
  std::ifstream in(std::string(QUALIFY_TEST_SOURCE_DIR) + "/../README.md", std::ios::binary);
  REQUIRE_MESSAGE(in, "cannot open README.md");
  const std::string readme((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  const std::size_t section = readme.find("## Point files (POINT.json)");
  REQUIRE(section != std::string::npos);
  const std::size_t start = readme.find("```json\n", section);
  REQUIRE(start != std::string::npos);
  const std::size_t end = readme.find("```", start + 8);
  REQUIRE(end != std::string::npos);
  std::string example = readme.substr(start + 8, end - start - 8);
  example.erase(example.find_last_not_of(" \n") + 1);  // so that every prefix is incomplete
  return example;
}

void check_malformed(std::string_view text, std::size_t line, std::size_t column,
                     std::string_view words) {
  const auto r = parse_exact(text);
  INFO("input: " << std::string(text) << "\nmessage: " << r.error.message);
  REQUIRE_FALSE(r.ok());
  CHECK(r.error.line == line);
  CHECK(r.error.column == column);
  CHECK(r.error.message.find(fmt::format("line {}, column {}: ", line, column)) == 0);
  CHECK(r.error.message.find(words) != std::string::npos);
}

}  // namespace

TEST_CASE("json: the examples of RFC 8259, section 13") {
  SUBCASE("the object") {
    const auto r = parse_exact(rfc_object);
    INFO(r.error.message);
    REQUIRE(r.ok());
    const json_value& image = member(*r.value, "Image");
    CHECK(r.value->keys == std::vector<std::string>{"Image"});
    CHECK(image.keys ==
          std::vector<std::string>{"Width", "Height", "Title", "Thumbnail", "Animated", "IDs"});
    CHECK(member(image, "Width").number == 800);
    CHECK(member(image, "Height").number == 600);
    CHECK(member(image, "Title").text == "View from 15th Floor");
    const json_value& thumb = member(image, "Thumbnail");
    CHECK(member(thumb, "Url").text == "http://www.example.com/image/481989943");
    CHECK(member(thumb, "Height").number == 125);
    CHECK(member(thumb, "Width").number == 100);
    CHECK(member(image, "Animated").kind == json_kind::boolean);
    CHECK_FALSE(member(image, "Animated").boolean);
    const json_value& ids = member(image, "IDs");
    REQUIRE(ids.items.size() == 4);
    const double expected[] = {116, 943, 234, 38793};
    for (std::size_t i = 0; i < 4; ++i) CHECK(ids.items[i].number == expected[i]);
  }
  SUBCASE("the array") {
    const auto r = parse_exact(rfc_array);
    INFO(r.error.message);
    REQUIRE(r.ok());
    REQUIRE(r.value->kind == json_kind::array);
    REQUIRE(r.value->items.size() == 2);
    const json_value& sf = r.value->items[0];
    const json_value& sv = r.value->items[1];
    CHECK(member(sf, "precision").text == "zip");
    CHECK(member(sf, "Latitude").number == 37.7668);
    CHECK(member(sf, "Longitude").number == -122.3959);
    CHECK(member(sf, "Address").kind == json_kind::string);
    CHECK(member(sf, "Address").text.empty());
    CHECK(member(sf, "City").text == "SAN FRANCISCO");
    CHECK(member(sf, "Zip").text == "94107");
    CHECK(member(sv, "Latitude").number == 37.371991);
    CHECK(member(sv, "Longitude").number == -122.026020);
    CHECK(member(sv, "City").text == "SUNNYVALE");
    CHECK(member(sv, "State").text == "CA");
    CHECK(member(sv, "Zip").text == "94085");
    CHECK(member(sv, "Country").text == "US");
  }
  SUBCASE("the three small texts of values only") {
    auto r = parse_exact("\"Hello world!\"");
    REQUIRE(r.ok());
    CHECK(r.value->text == "Hello world!");
    r = parse_exact("42");
    REQUIRE(r.ok());
    CHECK(r.value->kind == json_kind::number);
    CHECK(r.value->number == 42);
    r = parse_exact("true");
    REQUIRE(r.ok());
    CHECK(r.value->kind == json_kind::boolean);
    CHECK(r.value->boolean);
    r = parse_exact(" null ");
    REQUIRE(r.ok());
    CHECK(r.value->kind == json_kind::null);
  }
}

TEST_CASE("json: string escapes (RFC 8259, section 7)") {
  const auto text_of = [](std::string_view json) {
    const auto r = parse_exact(json);
    INFO(std::string(json) << ": " << r.error.message);
    REQUIRE(r.ok());
    REQUIRE(r.value->kind == json_kind::string);
    return r.value->text;
  };
  // Section 7's examples: the reverse solidus as \u005C, and the G clef (U+1D11E) as the
  // surrogate pair \uD834\uDD1E, whose UTF-8 form is F0 9D 84 9E (RFC 3629).
  CHECK(text_of(R"("\u005C")") == "\\");
  CHECK(text_of(R"("\uD834\uDD1E")") == "\xF0\x9D\x84\x9E");
  CHECK(text_of(R"("\ud834\udd1e")") == "\xF0\x9D\x84\x9E");
  CHECK(text_of(R"("\"\\\/\b\f\n\r\t")") == "\"\\/\b\f\n\r\t");
  CHECK(text_of(R"("a\u0000b")") == std::string("a\0b", 3));
  CHECK(text_of(R"("\u00e9\u20AC")") == "\xC3\xA9\xE2\x82\xAC");  // e acute, euro sign
  CHECK(text_of(R"("\uFFFF")") == "\xEF\xBF\xBF");
  CHECK(text_of(R"("\uDBFF\uDFFF")") == "\xF4\x8F\xBF\xBF");  // U+10FFFF, the last code point
  CHECK(text_of("\"caf\xC3\xA9 \xF0\x9F\x92\xA7\"") == "caf\xC3\xA9 \xF0\x9F\x92\xA7");  // raw
  CHECK(text_of("\"\x7f\"") == "\x7f");  // DEL needs no escape (section 7)
}

TEST_CASE("json: numbers agree with strtod under the C locale") {
  // glibc's strtod is an independent, correctly rounded conversion (the reader uses
  // std::from_chars).
  REQUIRE(std::string(std::setlocale(LC_NUMERIC, nullptr)) == "C");
  const char* tokens[] = {"0",
                          "-0",
                          "1",
                          "-1",
                          "0.5",
                          "123456789",
                          "9007199254740993",
                          "1e10",
                          "1E+10",
                          "1e-10",
                          "-2.5E-3",
                          "0.1",
                          "3.141592653589793238",
                          "1.7976931348623157e308",
                          "4.9e-324",
                          "2.2250738585072014e-308",
                          "123.456e-2",
                          "0e0",
                          "0.000001",
                          "18446744073709551616"};
  for (const char* token : tokens) {
    const auto r = parse_exact(token);
    INFO(token << ": " << r.error.message);
    REQUIRE(r.ok());
    REQUIRE(r.value->kind == json_kind::number);
    const double reference = std::strtod(token, nullptr);
    CHECK(r.value->number == reference);
    CHECK(std::signbit(r.value->number) == std::signbit(reference));
  }
  SUBCASE("below the smallest subnormal: zero, with its sign") {
    auto r = parse_exact("1e-400");
    REQUIRE(r.ok());
    CHECK(r.value->number == 0);
    r = parse_exact("-0.0000001e-999999999999999999999");
    REQUIRE(r.ok());
    CHECK(r.value->number == 0);
    CHECK(std::signbit(r.value->number));
  }
  SUBCASE("beyond the largest double: an error naming the path") {
    auto r = parse_exact(R"({"tank": {"volumes": [1, 1e999]}})");
    REQUIRE_FALSE(r.ok());
    CHECK(r.error.message ==
          "line 1, column 26: the number 1e999 is beyond the range of a double (about 1.8e308) "
          "(at tank.volumes[1])");
    r = parse_exact("[-1.8e308]");
    REQUIRE_FALSE(r.ok());
    CHECK(r.error.message.find("(at [0])") != std::string::npos);
    r = parse_exact("1" + std::string(309, '0'));  // 10^309
    REQUIRE_FALSE(r.ok());
    CHECK(r.error.message.find("...") != std::string::npos);  // long tokens are shortened
  }
}

TEST_CASE("json: malformed input gives the position and what was expected") {
  struct bad_text {
    std::string_view text;
    std::size_t line;
    std::size_t column;
    std::string_view words;  // a part of the message
  };
  const bad_text cases[] = {
      {"", 1, 1, "expected a value, got the end of the input"},
      {"  \n ", 2, 2, "expected a value, got the end of the input"},
      {"[1,]", 1, 4,
       "expected a value (object, array, string, number, true, false "
       "or null), got ']'"},
      {"{\"a\":1,}", 1, 8, "expected a member name in double quotes, got '}'"},
      {"{a:1}", 1, 2, "expected a member name in double quotes, got 'a'"},
      {"{'a':1}", 1, 2, "got '''"},
      {"[1 2]", 1, 4, "expected ',' or ']' after an array element, got '2'"},
      {"{\"a\":1 \"b\":2}", 1, 8, "expected ',' or '}' after an object member"},
      {"{\"a\" 1}", 1, 6, "expected ':' after a member name, got '1'"},
      {"[1", 1, 3, "expected ',' or ']' after an array element, got the end"},
      {"{\"a\":", 1, 6, "expected a value, got the end of the input (at a)"},
      {"01", 1, 1, "a number must not have a leading zero"},
      {"-", 1, 2, "expected a digit after '-', got the end of the input"},
      {"-x", 1, 2, "expected a digit after '-', got 'x'"},
      {"1.", 1, 3, "expected a digit after the decimal point"},
      {"1.e5", 1, 3, "expected a digit after the decimal point, got 'e'"},
      {"1e", 1, 3, "expected a digit in the exponent"},
      {"1e+", 1, 4, "expected a digit in the exponent"},
      {".5", 1, 1, "got '.'"},
      {"+1", 1, 1, "got '+'"},
      {"NaN", 1, 1, "got 'N'"},
      {"-Infinity", 1, 2, "expected a digit after '-', got 'I'"},
      {"0x10", 1, 2, "expected the end of the input after the top-level value, got 'x'"},
      {"tru", 1, 1, "expected 'true'"},
      {"True", 1, 1, "got 'T'"},
      {"nul", 1, 1, "expected 'null'"},
      {"[falsy]", 1, 2, "expected 'false'"},
      {"[1] x", 1, 5, "expected the end of the input after the top-level value"},
      {std::string_view("[1]\0", 4), 1, 4,
       "got the byte 0x00"},  // the NUL is not part of the literal
      {"1 2", 1, 3, "expected the end of the input"},
      {"// note\n1", 1, 1, "got '/'"},
      {"[1,\n 2,\n x]", 3, 2, "got 'x' (at [2])"},
      {"[\"\xC3\xA9\", x]", 1, 7, "got 'x'"},  // columns count characters
      {"\"abc", 1, 1, "the string that starts here has no closing '\"'"},
      {"\"a\tb\"", 1, 3, "the control character 0x09 must be escaped"},
      {"\"a\nb\"", 1, 3, "the control character 0x0a must be escaped"},
      {"\"\\x\"", 1, 2, "got '\\' followed by 'x'"},
      {"\"\\", 1, 2, "expected an escape after '\\', got the end of the input"},
      {"\"\\u12G4\"", 1, 6, "expected a hex digit after \\u, got 'G'"},
      {"\"\\u12", 1, 6, "expected four hex digits after \\u, got the end"},
      {"\"\\uD800\"", 1, 2, "\\uD800 is a high surrogate; expected \\u and a low"},
      {"\"\\uD800\\n\"", 1, 2, "high surrogate"},
      {"\"\\uD800\\u0041\"", 1, 8,
       "expected a low surrogate (\\uDC00-\\uDFFF) after "
       "\\uD800, got \\u0041"},
      {"\"\\uDC00\"", 1, 2, "\\uDC00 is a low surrogate without a high surrogate"},
      {"\"\xC3\"", 1, 2, "the byte 0xc3 is not valid UTF-8"},          // cut sequence
      {"\"\xC0\xAF\"", 1, 2, "the byte 0xc0 is not valid UTF-8"},      // overlong '/'
      {"\"\xED\xA0\x80\"", 1, 2, "the byte 0xed is not valid UTF-8"},  // surrogate
      {"\"\xFF\"", 1, 2, "the byte 0xff is not valid UTF-8"},
      {"{\"a\":1,\"a\":2}", 1, 8, "the member name \"a\" appears twice in one object"},
      {"{\"x\":{\"b\":[1,2}}", 1, 15,
       "expected ',' or ']' after an array element, "
       "got '}' (at x.b)"},
      {"\xEF\xBB\xBF", 1, 2, "expected a value"},  // a BOM alone
      {"\xEF\xBB", 1, 1, "got the byte 0xef"},     // half a BOM
  };
  for (const bad_text& c : cases) check_malformed(c.text, c.line, c.column, c.words);
}

TEST_CASE("json: a byte order mark is skipped, blanks are the four of RFC 8259 only") {
  auto r = parse_exact("\xEF\xBB\xBF[1]");
  REQUIRE(r.ok());
  CHECK(r.value->items.size() == 1);
  r = parse_exact(" \t\r\n[ \t\r\n1 \t\r\n] \t\r\n");
  REQUIRE(r.ok());
  check_malformed("\f[1]", 1, 1, "got the byte 0x0c");
  check_malformed("[1,\v2]", 1, 4, "got the byte 0x0b");
}

TEST_CASE("json: nesting deeper than max_depth is refused, not a stack overflow") {
  const auto nested = [](std::size_t depth) {
    return std::string(depth, '[') + std::string(depth, ']');
  };
  qualify_cli::json_read_options options;
  CHECK(parse_exact(nested(options.max_depth), options).ok());
  auto r = parse_exact(nested(options.max_depth + 1), options);
  REQUIRE_FALSE(r.ok());
  CHECK(r.error.column == options.max_depth + 1);
  CHECK(r.error.message.find("nested deeper than 128 levels") != std::string::npos);
  r = parse_exact(std::string(1000000, '['), options);  // far beyond any stack
  REQUIRE_FALSE(r.ok());
  r = parse_exact(std::string(100000, '{'), options);
  REQUIRE_FALSE(r.ok());  // the first '{' wants a name, so this fails early
  std::string objects;
  for (int i = 0; i < 200000; ++i) objects += "{\"a\":";
  r = parse_exact(objects, options);
  REQUIRE_FALSE(r.ok());
  CHECK(r.error.message.find("nested deeper") != std::string::npos);
  options.max_depth = 3;
  CHECK(parse_exact("[[[]]]", options).ok());
  CHECK_FALSE(parse_exact("[[[[]]]]", options).ok());
  CHECK(parse_exact("{\"a\":[{\"b\":1}]}", options).ok());
  CHECK_FALSE(parse_exact("{\"a\":[{\"b\":[]}]}", options).ok());
}

TEST_CASE("json: every truncation of a valid document is an error, never a crash") {
  for (const std::string& doc : {rfc_object, rfc_array, readme_point_example()}) {
    REQUIRE(parse_exact(doc).ok());
    for (std::size_t n = 0; n < doc.size(); ++n) {
      const auto r = parse_exact(std::string_view(doc).substr(0, n));
      INFO("prefix of " << n << " bytes");
      REQUIRE_FALSE(r.ok());
      CHECK(r.error.line >= 1);
      CHECK(r.error.column >= 1);
      CHECK_FALSE(r.error.message.empty());
    }
  }
}

TEST_CASE("json: bytes replaced anywhere in a document give a value or an error") {
  // A crude fuzz for the sanitizer build: every result is either a value or a message with a
  // position inside the text.
  const std::string doc = rfc_object;
  for (std::size_t i = 0; i < doc.size(); ++i)
    for (const char c : {'\0', '"', '\\', '{', '[', ']', ',', '-', 'e', '\xC3', '\xFF'}) {
      std::string changed = doc;
      changed[i] = c;
      const auto r = parse_exact(changed);
      if (r.ok()) continue;
      INFO("byte " << i << " set to " << int(c) << ": " << r.error.message);
      CHECK(r.error.line >= 1);
      CHECK(r.error.line <= 15);
      CHECK_FALSE(r.error.message.empty());
    }
}

TEST_CASE("json_path_member: plain names with a dot, others quoted and escaped") {
  CHECK(qualify_cli::json_path_member("", "x") == "x");
  CHECK(qualify_cli::json_path_member("constraints[3]", "gradient") == "constraints[3].gradient");
  CHECK(qualify_cli::json_path_member("multipliers", "tank A") == "multipliers[\"tank A\"]");
  CHECK(qualify_cli::json_path_member("m", "a\"b\\c\n") == "m[\"a\\\"b\\\\c\\u000a\"]");
  CHECK(qualify_cli::json_path_member("m", "3rd") == "m[\"3rd\"]");
  CHECK(qualify_cli::json_path_member("m", "") == "m[\"\"]");
  CHECK(qualify_cli::json_path_index("x", 7) == "x[7]");
}

// ---------------------------------------------------------------------------------------------
// POINT.json

namespace {

// The README's example with `from` replaced by `to` (each must occur exactly once).
std::string changed_example(std::string_view from, std::string_view to) {
  std::string doc = readme_point_example();
  const std::size_t at = doc.find(from);
  REQUIRE_MESSAGE(at != std::string::npos, "not in the example: " << std::string(from));
  REQUIRE_MESSAGE(doc.find(from, at + 1) == std::string::npos,
                  "twice in the example: " << std::string(from));
  doc.replace(at, from.size(), to);
  return doc;
}

// A schema error: exit 65, line set, and the message "line L, column C: <expected>".
void check_schema_error(const std::string& doc, std::string_view expected) {
  const auto r = read_exact(doc);
  REQUIRE_FALSE(r);
  INFO("message: " << r.error().message);
  CHECK(r.error().code == qualify_cli::exit_code::data);
  CHECK(r.error().line.has_value());
  CHECK_FALSE(r.error().file.has_value());
  CHECK(r.error().message.find(expected) != std::string::npos);
  CHECK(r.error().message.find("line ") == 0);
}

}  // namespace

TEST_CASE("point file: the README example, read field by field") {
  const auto r = read_exact(readme_point_example());
  INFO(r.error().message);
  REQUIRE(r);
  const qualify::model_at_point& m = r->model;
  CHECK(m.x == Eigen::Vector2d(4, 2));
  CHECK(m.objective_gradient == Eigen::Vector2d(8, 8));
  REQUIRE(m.objective_hessian.has_value());
  CHECK(*m.objective_hessian == (Eigen::Matrix2d() << 2, 0, 0, 4).finished());
  CHECK(m.labels == std::vector<std::string>{"demand", "roof_space", "shade"});
  CHECK(m.types == std::vector<qualify::constraint_type>(3, qualify::constraint_type::inequality));
  CHECK(m.kinds == std::vector<qualify::constraint_kind>{qualify::constraint_kind::affine,
                                                         qualify::constraint_kind::affine,
                                                         qualify::constraint_kind::convex});
  CHECK(m.values == Eigen::Vector3d(0, -3, -2.2));
  CHECK(m.jacobian == (Eigen::Matrix<double, 3, 2>() << -1, -1, 0, 1, 0.4, 1).finished());
  REQUIRE(m.hessians.size() == 3);
  CHECK_FALSE(m.hessians[0].has_value());
  CHECK_FALSE(m.hessians[1].has_value());
  REQUIRE(m.hessians[2].has_value());
  CHECK(*m.hessians[2] == (Eigen::Matrix2d() << 0.1, 0, 0, 0).finished());
  REQUIRE(r->multipliers.has_value());
  CHECK(*r->multipliers == Eigen::Vector3d(8, 0, 0));
  CHECK(m.convex_model);
  // The example is a KKT point: grad f + J^T lambda = 0, lambda_i g_i = 0 (checked here by
  // hand, so that the README shows a consistent point).
  CHECK((m.objective_gradient + m.jacobian.transpose() * *r->multipliers).norm() == 0);
  CHECK(m.values.cwiseProduct(*r->multipliers).norm() == 0);
}

TEST_CASE("point file: optional parts left out, equalities, multipliers in file order") {
  const std::string doc = R"({"x": [1, 2, 3],
    "objective": {"gradient": [0, 0, 1]},
    "constraints": [
      {"name": "flow", "type": "eq", "kind": "nonlinear", "value": 1e-9, "gradient": [1, 0, 0]},
      {"name": "pump", "type": "ineq", "kind": "unknown", "value": -1, "gradient": [0, 1, 0]}]})";
  auto r = read_exact(doc);
  INFO(r.error().message);
  REQUIRE(r);
  CHECK_FALSE(r->model.objective_hessian.has_value());
  CHECK(r->model.types ==
        std::vector<qualify::constraint_type>{qualify::constraint_type::equality,
                                              qualify::constraint_type::inequality});
  CHECK(r->model.kinds == std::vector<qualify::constraint_kind>{qualify::constraint_kind::nonlinear,
                                                                qualify::constraint_kind::unknown});
  CHECK(r->model.hessians.size() == 2);
  CHECK_FALSE(r->model.hessians[0].has_value());
  CHECK_FALSE(r->multipliers.has_value());
  CHECK_FALSE(r->model.convex_model);

  // Multipliers are matched by name, whatever their order in the file.
  std::string with = doc;
  with.insert(with.rfind('}'), R"(, "multipliers": {"pump": 0.25, "flow": -3})");
  r = read_exact(with);
  INFO(r.error().message);
  REQUIRE(r);
  REQUIRE(r->multipliers.has_value());
  CHECK(*r->multipliers == Eigen::Vector2d(-3, 0.25));

  // No constraints at all: an unconstrained point, a 0 x n Jacobian.
  r = read_exact(R"({"x": [1], "objective": {"gradient": [0]}, "constraints": [],
                     "multipliers": {}, "convex_model": false})");
  INFO(r.error().message);
  REQUIRE(r);
  CHECK(r->model.jacobian.rows() == 0);
  CHECK(r->model.jacobian.cols() == 1);
  CHECK(r->model.values.size() == 0);
  REQUIRE(r->multipliers.has_value());
  CHECK(r->multipliers->size() == 0);
}

TEST_CASE("point file: every schema error names the JSON path") {
  check_schema_error("[1]",
                     "line 1, column 1: the top-level value: expected an object, got an "
                     "array");
  check_schema_error("{}", "the top-level value: missing key \"x\"");
  const std::string small = R"({"x": [1], "objective": {"gradient": [0]}, "constraints": )";
  check_schema_error(small + "{}}", "constraints: expected an array, got an object");
  check_schema_error(small + "[1]}", "constraints[0]: expected an object, got a number");
  check_schema_error(small + "[], \"multipliers\": []}",
                     "multipliers: expected an object, got an array");
  // The README example with one text replaced, and the error expected.
  struct change {
    const char* from;
    const char* to;
    const char* expected;
  };
  const change changes[] = {
      {"\"x\": [4, 2]", "\"X\": [4, 2]",
       "X: unknown key; expected one of \"x\", \"objective\", \"constraints\", "
       "\"multipliers\", \"convex_model\""},
      {"\"x\": [4, 2]", "\"x\": []", "x: expected at least one number, got none"},
      {"\"x\": [4, 2]", "\"x\": [4, \"2\"]", "x[1]: expected a number, got a string"},
      {"\"x\": [4, 2]", "\"x\": {\"a\": 4}", "x: expected an array, got an object"},
      {"\"gradient\": [8, 8]", "\"gradient\": [8, 8, 0]",
       "objective.gradient: expected 2 numbers (the length of x), got 3"},
      {"\"gradient\": [8, 8], ", "", "objective: missing key \"gradient\""},
      {"[[2, 0], [0, 4]]", "[[2, 0]]",
       "objective.hessian: expected 2 rows (the length of x), got 1"},
      {"[[2, 0], [0, 4]]", "[[2, 0], [4]]",
       "objective.hessian[1]: expected 2 numbers (the length of x), got 1"},
      {"[[2, 0], [0, 4]]", "null", "objective.hessian: expected an array, got null"},
      {"\"value\": -3", "\"value\": \"-3\"",
       "constraints[1].value: expected a number, got a string"},
      {"\"gradient\": [0, 1]", "\"gradient\": [0, 1, 2]",
       "constraints[1].gradient: expected 2 numbers (the length of x), got 3"},
      {"\"gradient\": [0, 1]", "\"gradient\": [0, true]",
       "constraints[1].gradient[1]: expected a number, got a boolean"},
      {"[[0.1, 0], [0, 0]]", "[[0.1, 0], [0, 0], [0, 0]]",
       "constraints[2].hessian: expected 2 rows (the length of x), got 3"},
      {"\"type\": \"ineq\", \"kind\": \"convex\"", "\"type\": \"le\", \"kind\": \"convex\"",
       "constraints[2].type: expected one of \"ineq\", \"eq\", got \"le\""},
      {"\"kind\": \"convex\"", "\"kind\": \"linear\"",
       "constraints[2].kind: expected one of \"affine\", \"convex\", \"nonlinear\", "
       "\"unknown\", got \"linear\""},
      {"\"value\": -3, ", "", "constraints[1]: missing key \"value\""},
      {"\"hessian\": [[0.1", "\"hesian\": [[0.1",
       "constraints[2].hesian: unknown key; expected one of \"name\", \"type\", "
       "\"kind\", \"value\", \"gradient\", \"hessian\""},
      {"\"name\": \"roof_space\"", "\"name\": \"demand\"",
       "constraints[1].name: \"demand\" is already the name of constraints[0]; "
       "names must be unique"},
      {"\"name\": \"roof_space\"", "\"name\": \"\"",
       "constraints[1].name: expected a non-empty name"},
      {"\"name\": \"roof_space\"", "\"name\": 7",
       "constraints[1].name: expected a string, got a number"},
      {"\"roof_space\": 0", "\"roof_spaces\": 0",
       "multipliers.roof_spaces: no constraint is named \"roof_spaces\""},
      {"\"roof_space\": 0", "\"tank A\": 0",
       "multipliers[\"tank A\"]: no constraint is named \"tank A\""},
      {", \"shade\": 0", "",
       "multipliers: no value for 1 of the 3 constraints: \"shade\" (give one for "
       "every constraint, or leave multipliers out)"},
      {"\"demand\": 8", "\"demand\": null", "multipliers.demand: expected a number, got null"},
      {"\"convex_model\": true", "\"convex_model\": \"yes\"",
       "convex_model: expected a boolean, got a string"},
  };
  for (const change& c : changes) {
    INFO("replaced: " << c.from << " -> " << c.to);
    check_schema_error(changed_example(c.from, c.to), c.expected);
  }
}

TEST_CASE("point file: positions of schema errors, and JSON errors with their path") {
  // The line and column are those of the offending value.
  const std::string doc =
      "{\"x\": [1, 2],\n \"objective\": {\"gradient\": [0, 0]},\n"
      " \"constraints\": [{\"name\": \"a\", \"type\": \"eq\", "
      "\"kind\": \"affine\", \"value\": 0,\n   \"gradient\": [1]}]}";
  auto r = read_exact(doc);
  REQUIRE_FALSE(r);
  CHECK(r.error().message ==
        "line 4, column 16: constraints[0].gradient: expected 2 numbers (the length of x), got 1");
  CHECK(r.error().line == std::optional<std::size_t>(4));
  // The message the README quotes for its example.
  r = read_exact(changed_example("\"gradient\": [0, 1]", "\"gradient\": [0, 1, 2]"));
  REQUIRE_FALSE(r);
  CHECK(r.error().message ==
        "line 6, column 88: constraints[1].gradient: expected 2 numbers (the length of x), got 3");
  // A number beyond a double's range is refused by the JSON reader, with the path.
  r = read_exact(changed_example("\"value\": -3", "\"value\": -3e400"));
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::data);
  CHECK(r.error().message.find("the number -3e400 is beyond the range of a double (about "
                               "1.8e308) (at constraints[1].value)") != std::string::npos);
  // Duplicate names in multipliers are a JSON error (a name twice in one object).
  r = read_exact(changed_example("\"roof_space\": 0", "\"demand\": 0"));
  REQUIRE_FALSE(r);
  CHECK(r.error().message.find("the member name \"demand\" appears twice") != std::string::npos);
}

TEST_CASE("point file: every truncation of the README example is malformed (65)") {
  const std::string doc = readme_point_example();
  for (std::size_t n = 0; n < doc.size(); ++n) {
    const auto r = read_exact(std::string_view(doc).substr(0, n));
    INFO("prefix of " << n << " bytes");
    REQUIRE_FALSE(r);
    CHECK(r.error().code == qualify_cli::exit_code::data);
    CHECK(r.error().line.has_value());
  }
}

TEST_CASE("point file: cannot open (66) is told apart from malformed (65)") {
  qualify_test::temp_dir dir("qualify_point_test_");
  auto r = qualify_cli::read_point_file((dir.path / "missing.json").string());
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::no_input);
  CHECK(r.error().message.find("cannot open '") == 0);
  CHECK(r.error().message.find("missing.json': No such file or directory") != std::string::npos);

  r = qualify_cli::read_point_file(dir.path.string());
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::no_input);
  CHECK(r.error().message.find("it is a directory") != std::string::npos);

  const std::string bad = dir.write("bad.json", "{\"x\": [1,\n 2,]}").string();
  r = qualify_cli::read_point_file(bad);
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::data);
  CHECK(r.error().message == "'" + bad +
                                 "': line 2, column 4: expected a value (object, array, "
                                 "string, number, true, false or null), got ']' (at x[2])");
  CHECK(r.error().file == std::optional<std::string>(bad));
  CHECK(r.error().line == std::optional<std::size_t>(2));

  const std::string good = dir.write("good.json", readme_point_example()).string();
  r = qualify_cli::read_point_file(good);
  INFO(r.error().message);
  REQUIRE(r);
  CHECK(r->model.labels.size() == 3);

  qualify_cli::point_read_options small;
  small.max_bytes = 100;
  r = qualify_cli::read_point_file(good, small);
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::data);
  CHECK(r.error().message.find("more than the 100 (point_read_options::max_bytes)") !=
        std::string::npos);
}
