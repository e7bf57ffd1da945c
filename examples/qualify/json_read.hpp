// qualify command: a small strict JSON reader (RFC 8259) for the input files of the commands.
// SPDX-License-Identifier: MIT
#pragma once

#include <charconv>
#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <system_error>
#include <unordered_set>
#include <utility>
#include <vector>

#include "cli.hpp"

namespace qualify_cli {

/// The six kinds of JSON value (RFC 8259, sec. 3).
enum class json_kind { null, boolean, number, string, array, object };

constexpr std::string_view to_string(json_kind k) noexcept {
  switch (k) {
    case json_kind::null:
      return "null";
    case json_kind::boolean:
      return "a boolean";
    case json_kind::number:
      return "a number";
    case json_kind::string:
      return "a string";
    case json_kind::array:
      return "an array";
    case json_kind::object:
      break;
  }
  return "an object";
}

/// One parsed value. Arrays hold their elements in `items`; objects hold their names in `keys`
/// and the values in `items`, in document order. `offset` is the byte where the value starts,
/// for messages (`json_position`).
struct json_value {
  json_kind kind = json_kind::null;
  bool boolean = false;
  double number = 0;
  std::string text;  ///< a string's content, UTF-8, escapes resolved
  std::vector<std::string> keys;
  std::vector<json_value> items;
  std::size_t offset = 0;

  /// The member named `key`, or nullptr (also when this is not an object).
  const json_value* find(std::string_view key) const {
    for (std::size_t i = 0; i < keys.size(); ++i)
      if (keys[i] == key) return &items[i];
    return nullptr;
  }
};

/// A 1-based line and column; the column counts characters (UTF-8 sequences), not bytes.
struct json_position {
  std::size_t line = 1;
  std::size_t column = 1;
};

/// The position of byte `offset` of `text` (offset == size is the end of the input).
inline json_position position_of(std::string_view text, std::size_t offset) {
  json_position p;
  for (std::size_t i = 0; i < offset && i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c == '\n') {
      ++p.line;
      p.column = 1;
    } else if ((c & 0xC0) != 0x80) {  // not a UTF-8 continuation byte
      ++p.column;
    }
  }
  return p;
}

/// A JSON path segment for messages: `.name` for plain names (`name` at the top), `["..."]`
/// with escapes otherwise, so that `constraints[3].gradient` reads as written.
inline std::string json_path_member(std::string_view path, std::string_view key) {
  bool plain = !key.empty() && !(key[0] >= '0' && key[0] <= '9');
  for (const char c : key)
    plain = plain && ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
                      c == '_');
  if (plain) return path.empty() ? std::string(key) : std::string(path) + "." + std::string(key);
  std::string out(path);
  out += "[\"";
  for (const char c : key) {
    if (c == '"' || c == '\\') {
      out += '\\';
      out += c;
    } else if (static_cast<unsigned char>(c) < 0x20) {
      out += fmt::format("\\u{:04x}", static_cast<unsigned>(c));
    } else {
      out += c;
    }
  }
  return out + "\"]";
}

inline std::string json_path_index(std::string_view path, std::size_t index) {
  return fmt::format("{}[{}]", path, index);
}

/// Limits of the reader (RFC 8259, sec. 9 lets a parser set them).
struct json_read_options {
  /// Arrays and objects nested deeper than this are refused: the reader is recursive, and
  /// the limit keeps hostile input from exhausting the stack. The point files need 5.
  std::size_t max_depth = 128;
};

/// A failed parse: `message` is "line L, column C: what was found and what was expected
/// [(at PATH)]"; `line` and `column` repeat the position.
struct json_error {
  std::string message;
  std::size_t line = 0;
  std::size_t column = 0;
};

/// The value, or the error that kept it from being read (never both).
struct json_parse_result {
  std::optional<json_value> value;
  json_error error;
  bool ok() const noexcept { return value.has_value(); }
};

namespace detail {

class json_parser {
 public:
  json_parser(std::string_view text, const json_read_options& options)
      : text_(text), options_(options) {}

  json_parse_result run() {
    json_parse_result result;
    // RFC 8259 sec. 8.1: a parser may ignore a byte order mark.
    if (text_.substr(0, 3) == "\xEF\xBB\xBF") pos_ = 3;
    json_value root;
    skip_blanks();
    if (parse_value(root, 0)) {
      skip_blanks();
      if (pos_ < text_.size())
        fail(pos_, fmt::format("expected the end of the input after the top-level value, got {}",
                               found()));
      else
        result.value = std::move(root);
    }
    if (!result.value) result.error = std::move(error_);
    return result;
  }

 private:
  std::string_view text_;
  const json_read_options& options_;
  std::size_t pos_ = 0;
  std::string path_;  // of the value being read, for messages
  json_error error_;

  bool at_end() const { return pos_ >= text_.size(); }
  char peek() const { return text_[pos_]; }

  // What is at pos_, for "got ..." in messages.
  std::string found() const {
    if (at_end()) return "the end of the input";
    const auto c = static_cast<unsigned char>(peek());
    if (c >= 0x20 && c < 0x7f) return fmt::format("'{}'", static_cast<char>(c));
    return fmt::format("the byte 0x{:02x}", c);
  }

  bool fail(std::size_t offset, std::string what) {
    const json_position p = position_of(text_, offset);
    error_.line = p.line;
    error_.column = p.column;
    error_.message = fmt::format("line {}, column {}: {}", p.line, p.column, what);
    if (!path_.empty()) error_.message += fmt::format(" (at {})", path_);
    return false;
  }

  void skip_blanks() {  // RFC 8259 sec. 2: space, tab, LF, CR
    while (!at_end() && (peek() == ' ' || peek() == '\t' || peek() == '\n' || peek() == '\r'))
      ++pos_;
  }

  bool literal(std::string_view word, json_value& out) {
    if (text_.substr(pos_, word.size()) != word)
      return fail(pos_, fmt::format("expected '{}'", word));
    pos_ += word.size();
    out.kind = word == "null" ? json_kind::null : json_kind::boolean;
    out.boolean = word == "true";
    return true;
  }

  bool parse_value(json_value& out, std::size_t depth) {
    out.offset = pos_;
    if (at_end()) return fail(pos_, "expected a value, got the end of the input");
    switch (peek()) {
      case '{':
        return parse_object(out, depth + 1);
      case '[':
        return parse_array(out, depth + 1);
      case '"':
        out.kind = json_kind::string;
        return parse_string(out.text);
      case 't':
        return literal("true", out);
      case 'f':
        return literal("false", out);
      case 'n':
        return literal("null", out);
      default:
        break;
    }
    if (peek() == '-' || (peek() >= '0' && peek() <= '9')) return parse_number(out);
    return fail(pos_, fmt::format("expected a value (object, array, string, number, true, false "
                                  "or null), got {}",
                                  found()));
  }

  // Enters the array or object whose opening bracket is at pos_; `more` is false when the
  // closing bracket follows at once.
  bool open(json_value& out, json_kind kind, char close, std::size_t depth, bool& more) {
    if (depth > options_.max_depth)
      return fail(pos_, fmt::format("arrays and objects nested deeper than {} levels "
                                    "(json_read_options::max_depth)",
                                    options_.max_depth));
    out.kind = kind;
    ++pos_;
    skip_blanks();
    more = at_end() || peek() != close;
    if (!more) ++pos_;
    return true;
  }

  // After an element: ',' (then `more`) or the closing bracket.
  bool next(char close, std::string_view element, bool& more) {
    skip_blanks();
    if (at_end() || (peek() != ',' && peek() != close))
      return fail(pos_,
                  fmt::format("expected ',' or '{}' after {}, got {}", close, element, found()));
    more = peek() == ',';
    ++pos_;
    skip_blanks();
    return true;
  }

  bool parse_array(json_value& out, std::size_t depth) {
    bool more = false;
    if (!open(out, json_kind::array, ']', depth, more)) return false;
    const std::size_t path_size = path_.size();
    while (more) {
      path_ = json_path_index(path_.substr(0, path_size), out.items.size());
      out.items.emplace_back();
      if (!parse_value(out.items.back(), depth)) return false;
      path_.resize(path_size);
      if (!next(']', "an array element", more)) return false;
    }
    return true;
  }

  bool parse_object(json_value& out, std::size_t depth) {
    bool more = false;
    if (!open(out, json_kind::object, '}', depth, more)) return false;
    const std::size_t path_size = path_.size();
    std::unordered_set<std::string> seen;
    while (more) {
      if (at_end() || peek() != '"')
        return fail(pos_, fmt::format("expected a member name in double quotes, got {}", found()));
      const std::size_t key_offset = pos_;
      std::string key;
      if (!parse_string(key)) return false;
      // RFC 8259 sec. 4: names SHOULD be unique; a second value would be ambiguous.
      if (!seen.insert(key).second)
        return fail(key_offset, fmt::format("the member name \"{}\" appears twice in one object",
                                            valid_utf8(key)));
      skip_blanks();
      if (at_end() || peek() != ':')
        return fail(pos_, fmt::format("expected ':' after a member name, got {}", found()));
      ++pos_;
      skip_blanks();
      path_ = json_path_member(path_.substr(0, path_size), key);
      out.keys.push_back(std::move(key));
      out.items.emplace_back();
      if (!parse_value(out.items.back(), depth)) return false;
      path_.resize(path_size);
      if (!next('}', "an object member", more)) return false;
    }
    return true;
  }

  // Four hex digits after "\u"; pos_ is on the first.
  bool hex4(unsigned& code) {
    code = 0;
    for (int k = 0; k < 4; ++k, ++pos_) {
      if (at_end())
        return fail(pos_, "expected four hex digits after \\u, got the end of the input");
      const char c = peek();
      const int digit = c >= '0' && c <= '9'   ? c - '0'
                        : c >= 'a' && c <= 'f' ? c - 'a' + 10
                        : c >= 'A' && c <= 'F' ? c - 'A' + 10
                                               : -1;
      if (digit < 0)
        return fail(pos_, fmt::format("expected a hex digit after \\u, got {}", found()));
      code = code * 16 + static_cast<unsigned>(digit);
    }
    return true;
  }

  static void append_utf8(std::string& out, unsigned code) {
    if (code < 0x80) {
      out += static_cast<char>(code);
    } else if (code < 0x800) {
      out += static_cast<char>(0xC0 | (code >> 6));
      out += static_cast<char>(0x80 | (code & 0x3F));
    } else if (code < 0x10000) {
      out += static_cast<char>(0xE0 | (code >> 12));
      out += static_cast<char>(0x80 | ((code >> 6) & 0x3F));
      out += static_cast<char>(0x80 | (code & 0x3F));
    } else {
      out += static_cast<char>(0xF0 | (code >> 18));
      out += static_cast<char>(0x80 | ((code >> 12) & 0x3F));
      out += static_cast<char>(0x80 | ((code >> 6) & 0x3F));
      out += static_cast<char>(0x80 | (code & 0x3F));
    }
  }

  // RFC 8259 sec. 7; pos_ is on the opening quote.
  bool parse_string(std::string& out) {
    const std::size_t start = pos_++;
    for (;;) {
      if (at_end())
        return fail(start, "the string that starts here has no closing '\"' (the input ends)");
      const auto c = static_cast<unsigned char>(peek());
      if (c == '"') {
        ++pos_;
        return true;
      }
      if (c < 0x20)
        return fail(pos_, fmt::format("the control character 0x{:02x} must be escaped in a "
                                      "string (expected \\n, \\t or \\u00XX)",
                                      c));
      if (c != '\\') {
        // RFC 8259 sec. 8.1: JSON text is UTF-8.
        const std::size_t n = utf8_sequence_length(text_, pos_);
        if (n == 0) return fail(pos_, fmt::format("the byte 0x{:02x} is not valid UTF-8", c));
        out.append(text_.substr(pos_, n));
        pos_ += n;
        continue;
      }
      const std::size_t escape = pos_++;
      if (at_end()) return fail(escape, "expected an escape after '\\', got the end of the input");
      const char e = peek();
      ++pos_;
      switch (e) {
        case '"':
          out += '"';
          continue;
        case '\\':
          out += '\\';
          continue;
        case '/':
          out += '/';
          continue;
        case 'b':
          out += '\b';
          continue;
        case 'f':
          out += '\f';
          continue;
        case 'n':
          out += '\n';
          continue;
        case 'r':
          out += '\r';
          continue;
        case 't':
          out += '\t';
          continue;
        case 'u':
          break;
        default:
          --pos_;
          return fail(escape, fmt::format("expected one of \\\" \\\\ \\/ \\b \\f \\n \\r \\t "
                                          "\\uXXXX, got '\\' followed by {}",
                                          found()));
      }
      unsigned code = 0;
      if (!hex4(code)) return false;
      if (code >= 0xDC00 && code <= 0xDFFF)
        return fail(escape, fmt::format("\\u{:04X} is a low surrogate without a high surrogate "
                                        "before it",
                                        code));
      if (code >= 0xD800 && code <= 0xDBFF) {  // a pair encodes one character above U+FFFF
        if (text_.substr(pos_, 2) != "\\u")
          return fail(escape, fmt::format("\\u{:04X} is a high surrogate; expected \\u and a low "
                                          "surrogate (DC00-DFFF) right after it",
                                          code));
        const std::size_t second = pos_;
        pos_ += 2;
        unsigned low = 0;
        if (!hex4(low)) return false;
        if (low < 0xDC00 || low > 0xDFFF)
          return fail(second, fmt::format("expected a low surrogate (\\uDC00-\\uDFFF) after "
                                          "\\u{:04X}, got \\u{:04X}",
                                          code, low));
        code = 0x10000 + ((code - 0xD800) << 10) + (low - 0xDC00);
      }
      append_utf8(out, code);
    }
  }

  // RFC 8259 sec. 6: -? (0 | [1-9][0-9]*) (. [0-9]+)? ([eE] [+-]? [0-9]+)?
  bool parse_number(json_value& out) {
    const std::size_t start = pos_;
    const auto digit = [&] { return !at_end() && peek() >= '0' && peek() <= '9'; };
    const auto digits = [&] {
      while (digit()) ++pos_;
    };
    if (peek() == '-') ++pos_;
    if (!digit()) return fail(pos_, fmt::format("expected a digit after '-', got {}", found()));
    if (peek() == '0') {
      ++pos_;
      if (digit()) return fail(start, "a number must not have a leading zero");
    } else {
      digits();
    }
    if (!at_end() && peek() == '.') {
      ++pos_;
      if (!digit())
        return fail(pos_, fmt::format("expected a digit after the decimal point, got {}", found()));
      digits();
    }
    if (!at_end() && (peek() == 'e' || peek() == 'E')) {
      ++pos_;
      if (!at_end() && (peek() == '+' || peek() == '-')) ++pos_;
      if (!digit())
        return fail(pos_, fmt::format("expected a digit in the exponent, got {}", found()));
      digits();
    }
    const std::string_view token = text_.substr(start, pos_ - start);
    out.kind = json_kind::number;
    // std::from_chars: locale-independent, correctly rounded.
    const auto [ptr, ec] = std::from_chars(token.data(), token.data() + token.size(), out.number);
    (void)ptr;  // the token is a complete JSON number, which from_chars reads whole
    if (ec == std::errc::result_out_of_range && magnitude_below_one(token)) {
      out.number = token[0] == '-' ? -0.0 : 0.0;  // underflow: the nearest double is zero
    } else if (ec != std::errc() || !std::isfinite(out.number)) {
      return fail(start, fmt::format("the number {} is beyond the range of a double (about "
                                     "1.8e308)",
                                     token.size() > 40 ? std::string(token.substr(0, 40)) + "..."
                                                       : std::string(token)));
    }
    return true;
  }

  // True when a JSON number token has magnitude below 1 (so an out-of-range result is an
  // underflow, not an overflow): its first non-zero digit sits below the units place.
  static bool magnitude_below_one(std::string_view token) {
    const std::size_t e = token.find_first_of("eE");
    const std::string_view mantissa = token.substr(0, e);
    const std::size_t point = std::min(mantissa.find('.'), mantissa.size());
    const std::size_t first = mantissa.find_first_of("123456789");
    if (first == std::string_view::npos) return true;  // zero
    // Decimal exponent of the first significant digit, before the exponent part.
    long long lead = first < point ? static_cast<long long>(point - first) - 1
                                   : -static_cast<long long>(first - point);
    if (e != std::string_view::npos) {
      std::size_t k = e + 1;
      const bool negative = token[k] == '-';
      if (token[k] == '+' || token[k] == '-') ++k;
      long long exponent = 0;
      for (; k < token.size(); ++k)
        exponent = std::min(exponent * 10 + (token[k] - '0'), 1000000000LL);  // saturate
      lead += negative ? -exponent : exponent;
    }
    return lead < 0;
  }
};

}  // namespace detail

/// Parses one JSON text (RFC 8259): exactly one value, with blanks around it; a leading UTF-8
/// byte order mark is skipped. Strict: no comments, no trailing commas, no NaN or Infinity, no
/// leading zeros or '+', strings in valid UTF-8 with control characters escaped, no lone
/// surrogates in \u escapes, no member name twice in one object. A number beyond the range of
/// a double (1e999) is an error; one below the smallest subnormal reads as zero. Never throws
/// for bad input (only std::bad_alloc can escape) and never reads outside `text`.
inline json_parse_result parse_json(std::string_view text, const json_read_options& options = {}) {
  return detail::json_parser(text, options).run();
}

}  // namespace qualify_cli
