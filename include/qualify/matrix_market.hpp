// qualify: a streaming Matrix Market reader (general real/integer/pattern) and a small writer.
// SPDX-License-Identifier: MIT
#pragma once

// The format is NIST's: R. F. Boisvert, R. Pozo, K. Remington, "The Matrix Market Exchange
// Formats: Initial Design", NISTIR 5935, 1996. Only `general` symmetry is accepted: a Jacobian
// is rarely symmetric, and expanding a symmetric file silently would hide what was stored.

#include <fmt/format.h>

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <istream>
#include <limits>
#include <optional>
#include <qualify/report.hpp>
#include <string>
#include <string_view>
#include <system_error>
#include <vector>

namespace qualify {

/// How the entries are stored: `coordinate` lists (row, column, value) of chosen entries,
/// `array` lists every entry in column-major order.
enum class matrix_market_format { coordinate, array };

/// What an entry holds. `pattern` (coordinate only) has no value: each entry reads as 1.
enum class matrix_market_field { real, integer, pattern };

/// Why a read failed. The qualify command maps `cannot_open` to exit code 66 (EX_NOINPUT)
/// and `malformed` to 65 (EX_DATAERR).
enum class read_error {
  none,         ///< no error recorded
  cannot_open,  ///< the file could not be opened or read (missing, a directory, an I/O error)
  malformed     ///< the bytes were read but are not an accepted Matrix Market matrix
};

/// Stable strings (JSON, logs); never renamed once released.
constexpr std::string_view to_string(matrix_market_format f) noexcept {
  return f == matrix_market_format::array ? "array" : "coordinate";
}
constexpr std::string_view to_string(matrix_market_field f) noexcept {
  switch (f) {
    case matrix_market_field::integer:
      return "integer";
    case matrix_market_field::pattern:
      return "pattern";
    case matrix_market_field::real:
      break;
  }
  return "real";
}
constexpr std::string_view to_string(read_error e) noexcept {
  switch (e) {
    case read_error::cannot_open:
      return "cannot_open";
    case read_error::malformed:
      return "malformed";
    case read_error::none:
      break;
  }
  return "none";
}

/// Limits that keep a hostile or mistaken file from exhausting memory.
struct matrix_market_options {
  /// A line is malformed when its length in bytes (newline excluded) > max_line_length.
  /// Real files have lines of a few dozen bytes; the limit stops a binary file from being
  /// buffered whole while the reader looks for a newline.
  std::size_t max_line_length = std::size_t{1} << 20;
  /// to_dense refuses when rows * cols > max_dense_entries (8 bytes each: the default,
  /// 2^26, is 512 MiB).
  std::size_t max_dense_entries = std::size_t{1} << 26;
};

/// One stored entry, 0-based. Duplicates are kept as read; assembly sums them (common
/// practice for coordinate files, no source: NISTIR 5935's examples have no duplicates).
struct matrix_market_entry {
  Index row = 0;
  Index col = 0;
  double value = 0;
};

/// What a read produced. On failure `ok` is false, `error` says which kind, `message` names
/// the problem and `line` is the 1-based line it was found on (when it concerns a line);
/// the other fields then hold what was read before the problem.
struct matrix_market_data {
  bool ok = false;
  read_error error = read_error::none;
  std::string message = "was not read";
  std::optional<std::size_t> line;

  Index rows = 0;
  Index cols = 0;
  matrix_market_format format = matrix_market_format::coordinate;
  matrix_market_field field = matrix_market_field::real;
  /// The number of entries the size line announced (rows * cols for `array`).
  Index announced_entries = 0;
  /// In file order; `array` files give every entry, zeros included, column by column.
  std::vector<matrix_market_entry> entries;
};

/// An assembled matrix, or why it could not be assembled (`ok` false, `message` says why).
template <class Matrix>
struct assembled_matrix {
  bool ok = false;
  std::string message = "was not assembled";
  Matrix matrix;
};

namespace detail {

inline bool mm_is_space(char c) noexcept {
  return c == ' ' || c == '\t' || c == '\r' || c == '\v' || c == '\f';
}

/// Cuts the next whitespace-separated token off the front of `rest`; empty at the end.
inline std::string_view mm_next_token(std::string_view& rest) noexcept {
  std::size_t i = 0;
  while (i < rest.size() && mm_is_space(rest[i])) ++i;
  std::size_t j = i;
  while (j < rest.size() && !mm_is_space(rest[j])) ++j;
  std::string_view token = rest.substr(i, j - i);
  rest.remove_prefix(j);
  return token;
}

inline bool mm_iequals(std::string_view a, std::string_view lower) noexcept {
  if (a.size() != lower.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    char c = a[i];
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
    if (c != lower[i]) return false;
  }
  return true;
}

/// A token for a message: quoted, cut short and with control bytes shown as '?', so that a
/// garbled or binary line cannot flood or corrupt a log.
inline std::string mm_quote(std::string_view token) {
  constexpr std::size_t shown = 40;
  std::string text(token.substr(0, shown));
  for (char& c : text)
    if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f) c = '?';
  return "'" + text + (token.size() > shown ? "...'" : "'");
}

enum class mm_number { ok, garbled, overflow };

inline mm_number mm_parse_index(std::string_view token, Index& value) noexcept {
  const char* first = token.data();
  const char* last = first + token.size();
  if (first != last && *first == '+') {
    ++first;  // from_chars takes a '-' but refuses a '+'
    if (first == last || *first == '+' || *first == '-') return mm_number::garbled;
  }
  auto [ptr, ec] = std::from_chars(first, last, value);
  if (ec == std::errc::result_out_of_range) return mm_number::overflow;
  if (ec != std::errc() || ptr != last) return mm_number::garbled;
  return mm_number::ok;
}

/// Decimal exponent of the leading digit of a decimal literal that from_chars found out of
/// range: negative means it underflowed (it rounds to a signed zero), otherwise it overflowed.
inline long mm_decimal_magnitude(std::string_view token) noexcept {
  std::size_t i = 0;
  if (i < token.size() && (token[i] == '+' || token[i] == '-')) ++i;
  long position = 0;  // digits before the point, counted from the first nonzero one
  bool seen_point = false, seen_nonzero = false;
  long leading_fraction_zeros = 0;
  for (; i < token.size(); ++i) {
    char c = token[i];
    if (c == '.') {
      seen_point = true;
      continue;
    }
    if (c < '0' || c > '9') break;
    if (c != '0') seen_nonzero = true;
    if (!seen_point && seen_nonzero) ++position;
    if (seen_point && !seen_nonzero) ++leading_fraction_zeros;
  }
  long exponent = 0;
  if (i < token.size() && (token[i] == 'e' || token[i] == 'E')) {
    std::string_view digits = token.substr(i + 1);
    if (!digits.empty() && digits.front() == '+') digits.remove_prefix(1);
    auto [ptr, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), exponent);
    if (ec == std::errc::result_out_of_range)
      exponent = (!digits.empty() && digits.front() == '-') ? std::numeric_limits<long>::min() / 2
                                                            : std::numeric_limits<long>::max() / 2;
    (void)ptr;
  }
  long leading = position > 0 ? position - 1 : -(leading_fraction_zeros + 1);
  return exponent + leading;
}

inline mm_number mm_parse_real(std::string_view token, double& value) noexcept {
  const char* first = token.data();
  const char* last = first + token.size();
  if (first != last && *first == '+') {
    ++first;  // as for indices: some writers put a '+' there
    if (first == last || *first == '+' || *first == '-') return mm_number::garbled;
  }
  auto [ptr, ec] = std::from_chars(first, last, value, std::chars_format::general);
  if (ptr != last || (ec != std::errc() && ec != std::errc::result_out_of_range))
    return mm_number::garbled;
  if (ec == std::errc::result_out_of_range) {
    if (mm_decimal_magnitude(token) >= 0) return mm_number::overflow;
    value = token.front() == '-' ? -0.0 : 0.0;  // IEEE rounding of an underflow
  }
  return mm_number::ok;
}

/// The line-by-line state machine; the readers below only cut their input into lines.
class mm_parser {
 public:
  mm_parser(matrix_market_data& out, std::optional<std::uintmax_t> input_bytes)
      : out_(out), input_bytes_(input_bytes) {
    out_ = matrix_market_data{};
  }

  /// Feeds the next line (without its newline). Returns false once an error is recorded.
  bool line(std::string_view text) {
    ++line_no_;
    switch (state_) {
      case state::header:
        return header(text);
      case state::size:
        return size(text);
      case state::entries:
        return entry(text);
      case state::failed:
        return false;
    }
    return false;
  }

  /// Records an error that is not about the data's grammar (I/O, an overlong line).
  void fail(read_error kind, std::string message, std::optional<std::size_t> line) {
    out_.ok = false;
    out_.error = kind;
    out_.message = line ? fmt::format("line {}: {}", *line, message) : std::move(message);
    out_.line = line;
    state_ = state::failed;
  }

  std::size_t next_line() const noexcept { return line_no_ + 1; }

  /// End of input: checks that everything announced arrived.
  void finish() {
    if (state_ == state::failed) return;
    const std::size_t last = std::max<std::size_t>(line_no_, 1);
    if (state_ == state::header) {
      malformed(last,
                "missing header: the file is empty; it must start with "
                "'%%MatrixMarket matrix ...'");
    } else if (state_ == state::size) {
      malformed(last, "the file ends before the size line");
    } else if (read_ < out_.announced_entries) {
      malformed(last, fmt::format("the file ends after {} of the {} entries announced on line {}",
                                  read_, out_.announced_entries, size_line_));
    }
    if (state_ == state::failed) return;
    out_.ok = true;
    out_.error = read_error::none;
    out_.message.clear();
    out_.line.reset();
  }

 private:
  enum class state { header, size, entries, failed };

  bool malformed(std::size_t line, std::string message) {
    fail(read_error::malformed, std::move(message), line);
    return false;
  }
  bool malformed(std::string message) { return malformed(line_no_, std::move(message)); }

  static bool blank_or_comment(std::string_view text) {
    std::size_t i = 0;
    while (i < text.size() && mm_is_space(text[i])) ++i;
    return i == text.size() || text[i] == '%';
  }

  bool header(std::string_view text) {
    // A UTF-8 byte-order mark is not part of the format, but editors add it.
    if (line_no_ == 1 && text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);
    std::string_view rest = text;
    std::string_view banner = mm_next_token(rest);
    // The banner starts the line; keywords are case-insensitive (NISTIR 5935), the banner is
    // taken the same way.
    if (text.empty() || text.front() != '%' || !mm_iequals(banner, "%%matrixmarket"))
      return malformed("missing header: the first line must start with '%%MatrixMarket', found " +
                       mm_quote(text));
    std::string_view object = mm_next_token(rest);
    std::string_view format = mm_next_token(rest);
    std::string_view field = mm_next_token(rest);
    std::string_view symmetry = mm_next_token(rest);
    if (object.empty()) return malformed("the header names no object; expected 'matrix'");
    if (!mm_iequals(object, "matrix"))
      return malformed(
          fmt::format("the object {} is not supported; only 'matrix' is", mm_quote(object)));
    if (format.empty())
      return malformed("the header names no storage format; expected 'coordinate' or 'array'");
    if (mm_iequals(format, "coordinate"))
      out_.format = matrix_market_format::coordinate;
    else if (mm_iequals(format, "array"))
      out_.format = matrix_market_format::array;
    else
      return malformed(fmt::format("unknown storage format {}; expected 'coordinate' or 'array'",
                                   mm_quote(format)));
    if (field.empty())
      return malformed("the header names no field; expected 'real', 'integer' or 'pattern'");
    if (mm_iequals(field, "real"))
      out_.field = matrix_market_field::real;
    else if (mm_iequals(field, "integer"))
      out_.field = matrix_market_field::integer;
    else if (mm_iequals(field, "pattern"))
      out_.field = matrix_market_field::pattern;
    else if (mm_iequals(field, "complex"))
      return malformed(
          "the field 'complex' is not supported; only 'real', 'integer' and "
          "'pattern' are");
    else
      return malformed(fmt::format("unknown field {}; expected 'real', 'integer' or 'pattern'",
                                   mm_quote(field)));
    if (out_.field == matrix_market_field::pattern && out_.format == matrix_market_format::array)
      return malformed("the field 'pattern' is defined for 'coordinate' storage only, not 'array'");
    if (symmetry.empty()) return malformed("the header names no symmetry; expected 'general'");
    if (!mm_iequals(symmetry, "general")) {
      for (std::string_view known : {"symmetric", "skew-symmetric", "hermitian"})
        if (mm_iequals(symmetry, known))
          return malformed(
              fmt::format("the symmetry {} is not supported; only 'general' is "
                          "(write every entry out)",
                          mm_quote(symmetry)));
      return malformed(fmt::format("unknown symmetry {}; expected 'general'", mm_quote(symmetry)));
    }
    std::string_view extra = mm_next_token(rest);
    if (!extra.empty())
      return malformed(
          fmt::format("unexpected word {} after the symmetry in the header", mm_quote(extra)));
    state_ = state::size;
    return true;
  }

  bool size_number(std::string_view token, const char* what, Index& value) {
    if (token.empty())
      return malformed(fmt::format("the size line has no {}; expected '{}'", what,
                                   out_.format == matrix_market_format::coordinate
                                       ? "rows columns entries"
                                       : "rows columns"));
    switch (mm_parse_index(token, value)) {
      case mm_number::garbled:
        return malformed(
            fmt::format("the {} {} on the size line is not an integer", what, mm_quote(token)));
      case mm_number::overflow:
        return malformed(fmt::format("the {} {} on the size line overflows a {}-bit index", what,
                                     mm_quote(token), 8 * sizeof(Index)));
      case mm_number::ok:
        break;
    }
    if (value < 0)
      return malformed(fmt::format("the {} on the size line is negative ({})", what, value));
    return true;
  }

  bool size(std::string_view text) {
    if (blank_or_comment(text)) return true;
    std::string_view rest = text;
    if (!size_number(mm_next_token(rest), "row count", out_.rows)) return false;
    if (!size_number(mm_next_token(rest), "column count", out_.cols)) return false;
    if (out_.format == matrix_market_format::coordinate) {
      if (!size_number(mm_next_token(rest), "entry count", out_.announced_entries)) return false;
    } else if (out_.cols != 0 && out_.rows > std::numeric_limits<Index>::max() / out_.cols) {
      return malformed(fmt::format("the array size {} x {} overflows a {}-bit entry count",
                                   out_.rows, out_.cols, 8 * sizeof(Index)));
    } else {
      out_.announced_entries = out_.rows * out_.cols;
    }
    std::string_view extra = mm_next_token(rest);
    if (!extra.empty())
      return malformed(
          fmt::format("unexpected {} after the sizes on the size line", mm_quote(extra)));
    // Reserve no more than the input can hold (two bytes per entry at the least), so that an
    // absurd announcement cannot allocate memory the data does not back.
    std::uintmax_t cap = input_bytes_ ? *input_bytes_ / 2 + 1 : std::uintmax_t{1} << 16;
    out_.entries.reserve(static_cast<std::size_t>(
        std::min<std::uintmax_t>(static_cast<std::uintmax_t>(out_.announced_entries), cap)));
    size_line_ = line_no_;
    state_ = state::entries;
    return true;
  }

  bool index(std::string_view token, const char* what, Index bound, Index& value) {
    if (token.empty()) return malformed(fmt::format("entry {} has no {} index", read_ + 1, what));
    switch (mm_parse_index(token, value)) {
      case mm_number::garbled:
        return malformed(fmt::format("the {} index {} of entry {} is not an integer", what,
                                     mm_quote(token), read_ + 1));
      case mm_number::overflow:
        return malformed(fmt::format("the {} index {} of entry {} overflows a {}-bit index", what,
                                     mm_quote(token), read_ + 1, 8 * sizeof(Index)));
      case mm_number::ok:
        break;
    }
    if (value == 0)
      return malformed(
          fmt::format("the {} index of entry {} is 0; indices are 1-based", what, read_ + 1));
    if (value < 0 || value > bound)
      return malformed(fmt::format("the {} index {} of entry {} is out of range 1..{}", what, value,
                                   read_ + 1, bound));
    --value;
    return true;
  }

  std::string where(Index row, Index col) const {
    return fmt::format("entry {} (row {}, column {})", read_ + 1, row + 1, col + 1);
  }

  bool value(std::string_view token, Index row, Index col, double& value) {
    if (token.empty()) return malformed(fmt::format("{} has no value", where(row, col)));
    if (out_.field == matrix_market_field::integer) {
      Index integer = 0;
      switch (mm_parse_index(token, integer)) {
        case mm_number::garbled:
          return malformed(
              fmt::format("the value {} of {} is not an integer (the field is "
                          "'integer')",
                          mm_quote(token), where(row, col)));
        case mm_number::overflow:
          return malformed(fmt::format("the value {} of {} overflows a {}-bit integer",
                                       mm_quote(token), where(row, col), 8 * sizeof(Index)));
        case mm_number::ok:
          break;
      }
      value = static_cast<double>(integer);  // exact up to 2^53
      return true;
    }
    switch (mm_parse_real(token, value)) {
      case mm_number::garbled:
        return malformed(
            fmt::format("the value {} of {} is not a number", mm_quote(token), where(row, col)));
      case mm_number::overflow:
        return malformed(
            fmt::format("the value {} of {} overflows a double", mm_quote(token), where(row, col)));
      case mm_number::ok:
        break;
    }
    if (std::isnan(value)) return malformed(fmt::format("{} is NaN", where(row, col)));
    if (std::isinf(value))
      return malformed(fmt::format("{} is infinite ({})", where(row, col), mm_quote(token)));
    return true;
  }

  bool entry(std::string_view text) {
    if (blank_or_comment(text)) return true;
    if (read_ >= out_.announced_entries)
      return malformed(fmt::format("extra entry: line {} announced {} entries", size_line_,
                                   out_.announced_entries));
    std::string_view rest = text;
    matrix_market_entry e;
    if (out_.format == matrix_market_format::coordinate) {
      if (!index(mm_next_token(rest), "row", out_.rows, e.row)) return false;
      if (!index(mm_next_token(rest), "column", out_.cols, e.col)) return false;
    } else {
      e.row = read_ % out_.rows;  // column-oriented order (NISTIR 5935); rows > 0 here
      e.col = read_ / out_.rows;
    }
    if (out_.field == matrix_market_field::pattern)
      e.value = 1;
    else if (!value(mm_next_token(rest), e.row, e.col, e.value))
      return false;
    std::string_view extra = mm_next_token(rest);
    if (!extra.empty())
      return malformed(fmt::format("unexpected {} after {}; one entry per line", mm_quote(extra),
                                   where(e.row, e.col)));
    out_.entries.push_back(e);
    ++read_;
    return true;
  }

  matrix_market_data& out_;
  std::optional<std::uintmax_t> input_bytes_;
  state state_ = state::header;
  std::size_t line_no_ = 0;
  std::size_t size_line_ = 0;
  Index read_ = 0;
};

/// Cuts the bytes delivered by `read(char* buffer, std::size_t capacity) -> std::size_t`
/// (0 at the end) into lines, in chunks of 1 MiB, and feeds them to `parser`.
template <class Read>
void mm_feed_chunks(mm_parser& parser, const matrix_market_options& options, Read&& read) {
  constexpr std::size_t chunk = std::size_t{1} << 20;
  std::vector<char> buffer(chunk);
  std::size_t begin = 0, end = 0;
  auto too_long = [&] {
    parser.fail(
        read_error::malformed,
        fmt::format("the line is longer than {} bytes (max_line_length)", options.max_line_length),
        parser.next_line());
  };
  for (;;) {
    while (begin < end) {
      const void* found = std::memchr(buffer.data() + begin, '\n', end - begin);
      if (!found) break;
      std::size_t stop = static_cast<std::size_t>(static_cast<const char*>(found) - buffer.data());
      if (stop - begin > options.max_line_length) return too_long();
      if (!parser.line(std::string_view(buffer.data() + begin, stop - begin))) return;
      begin = stop + 1;
    }
    if (end - begin > options.max_line_length) return too_long();  // no newline in sight
    if (begin > 0) {
      std::memmove(buffer.data(), buffer.data() + begin, end - begin);
      end -= begin;
      begin = 0;
    }
    if (buffer.size() - end < chunk / 2) buffer.resize(buffer.size() + chunk);  // a long line
    std::size_t got = read(buffer.data() + end, buffer.size() - end);
    if (got == 0) break;
    end += got;
  }
  if (begin < end && !parser.line(std::string_view(buffer.data() + begin, end - begin))) return;
  parser.finish();
}

}  // namespace detail

/// Parses Matrix Market text held in memory. Never throws for conditions of the data.
inline matrix_market_data parse_matrix_market(std::string_view text,
                                              const matrix_market_options& options = {}) {
  matrix_market_data out;
  detail::mm_parser parser(out, text.size());
  std::size_t offset = 0;
  detail::mm_feed_chunks(parser, options, [&](char* buffer, std::size_t capacity) {
    std::size_t n = std::min(capacity, text.size() - offset);
    std::memcpy(buffer, text.data() + offset, n);
    offset += n;
    return n;
  });
  return out;
}

namespace detail {

inline matrix_market_data mm_cannot_open(std::string message) {
  matrix_market_data out;
  out.error = read_error::cannot_open;
  out.message = std::move(message);
  return out;
}

inline matrix_market_data mm_read_stream(std::istream& in, const matrix_market_options& options,
                                         std::optional<std::uintmax_t> input_bytes) {
  matrix_market_data out;
  mm_parser parser(out, input_bytes);
  bool failed = false;
  mm_feed_chunks(parser, options, [&](char* buffer, std::size_t capacity) {
    if (!in.good()) return std::size_t{0};
    in.read(buffer, static_cast<std::streamsize>(capacity));
    if (in.bad()) {
      failed = true;
      return std::size_t{0};
    }
    return static_cast<std::size_t>(in.gcount());
  });
  if (failed) return mm_cannot_open("reading the input failed (I/O error)");
  return out;
}

}  // namespace detail

/// Reads Matrix Market text from a stream in large chunks (stdin in the command). A stream
/// that goes bad while reading gives `read_error::cannot_open`.
inline matrix_market_data read_matrix_market(std::istream& in,
                                             const matrix_market_options& options = {}) {
  return detail::mm_read_stream(in, options, std::nullopt);
}

/// Reads a Matrix Market file. `error` is `cannot_open` when the file cannot be opened or
/// read, `malformed` when its contents are not an accepted matrix.
inline matrix_market_data read_matrix_market(const std::filesystem::path& path,
                                             const matrix_market_options& options = {}) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    return detail::mm_cannot_open(
        fmt::format("cannot open '{}': it is a directory", path.string()));
  std::ifstream in(path, std::ios::binary);
  if (!in)
    return detail::mm_cannot_open(
        fmt::format("cannot open '{}': {}", path.string(), std::strerror(errno)));
  std::uintmax_t bytes = std::filesystem::file_size(path, ec);
  matrix_market_data out =
      detail::mm_read_stream(in, options, ec ? std::nullopt : std::optional<std::uintmax_t>(bytes));
  if (out.error == read_error::cannot_open)
    out.message = fmt::format("reading '{}' failed (I/O error)", path.string());
  return out;
}

/// Assembles a sparse matrix, summing duplicate entries. Refuses data that was
/// not read successfully and sizes that do not fit the matrix's int indices.
inline assembled_matrix<Eigen::SparseMatrix<double>> to_sparse(const matrix_market_data& data) {
  assembled_matrix<Eigen::SparseMatrix<double>> result;
  if (!data.ok) {
    result.message = "the Matrix Market data was not read successfully: " + data.message;
    return result;
  }
  using storage_index = Eigen::SparseMatrix<double>::StorageIndex;
  constexpr Index limit = std::numeric_limits<storage_index>::max();
  if (data.rows > limit || data.cols > limit || static_cast<Index>(data.entries.size()) > limit) {
    result.message = fmt::format(
        "a {} x {} matrix with {} entries exceeds the sparse index "
        "limit {}",
        data.rows, data.cols, data.entries.size(), limit);
    return result;
  }
  std::vector<Eigen::Triplet<double, storage_index>> triplets;
  triplets.reserve(data.entries.size());
  for (const matrix_market_entry& e : data.entries)
    triplets.emplace_back(static_cast<storage_index>(e.row), static_cast<storage_index>(e.col),
                          e.value);
  result.matrix.resize(data.rows, data.cols);
  result.matrix.setFromTriplets(triplets.begin(), triplets.end());  // sums duplicates
  result.ok = true;
  result.message.clear();
  return result;
}

/// Assembles a dense matrix, summing duplicate entries. Refuses data that was not read
/// successfully, and sizes with rows * cols > options.max_dense_entries.
inline assembled_matrix<Eigen::MatrixXd> to_dense(const matrix_market_data& data,
                                                  const matrix_market_options& options = {}) {
  assembled_matrix<Eigen::MatrixXd> result;
  if (!data.ok) {
    result.message = "the Matrix Market data was not read successfully: " + data.message;
    return result;
  }
  const auto rows = static_cast<std::uintmax_t>(data.rows);
  const auto cols = static_cast<std::uintmax_t>(data.cols);
  if (cols != 0 && rows > options.max_dense_entries / cols) {
    result.message = fmt::format(
        "a dense {} x {} matrix exceeds max_dense_entries = {}; "
        "assemble it sparse or raise the limit",
        data.rows, data.cols, options.max_dense_entries);
    return result;
  }
  result.matrix = Eigen::MatrixXd::Zero(data.rows, data.cols);
  for (const matrix_market_entry& e : data.entries) result.matrix(e.row, e.col) += e.value;
  result.ok = true;
  result.message.clear();
  return result;
}

namespace detail {

inline void mm_append_header(fmt::memory_buffer& out, Index rows, Index cols, Index entries) {
  fmt::format_to(std::back_inserter(out),
                 "%%MatrixMarket matrix coordinate real general\n"
                 "{} {} {}\n",
                 rows, cols, entries);
}

inline void mm_append_entry(fmt::memory_buffer& out, Index row, Index col, double value) {
  // "{}" is the shortest text that reads back to the same double.
  fmt::format_to(std::back_inserter(out), "{} {} {}\n", row + 1, col + 1, value);
}

inline bool mm_write_file(const std::filesystem::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(text.data(), static_cast<std::streamsize>(text.size()));
  out.close();
  return static_cast<bool>(out);
}

}  // namespace detail

/// The nonzero entries of a dense matrix as Matrix Market text, `coordinate real general`,
/// column by column. Values are written in the shortest form that reads back exactly;
/// NaN and Inf are written as such (the reader refuses them).
template <class Derived>
std::string to_matrix_market(const Eigen::MatrixBase<Derived>& matrix) {
  const auto& m = matrix.derived();
  Index nonzeros = 0;
  for (Index j = 0; j < m.cols(); ++j)
    for (Index i = 0; i < m.rows(); ++i) nonzeros += m(i, j) != 0 ? 1 : 0;
  fmt::memory_buffer out;
  detail::mm_append_header(out, m.rows(), m.cols(), nonzeros);
  for (Index j = 0; j < m.cols(); ++j)
    for (Index i = 0; i < m.rows(); ++i)
      if (m(i, j) != 0) detail::mm_append_entry(out, i, j, static_cast<double>(m(i, j)));
  return fmt::to_string(out);
}

/// The stored entries of a sparse matrix (explicit zeros included) as Matrix Market text,
/// `coordinate real general`.
template <class Derived>
std::string to_matrix_market(const Eigen::SparseMatrixBase<Derived>& matrix) {
  using column_major = Eigen::SparseMatrix<typename Derived::Scalar, Eigen::ColMajor,
                                           typename Derived::StorageIndex>;
  const column_major m = matrix.derived();
  fmt::memory_buffer out;
  detail::mm_append_header(out, m.rows(), m.cols(), m.nonZeros());
  for (Index j = 0; j < m.outerSize(); ++j)
    for (typename column_major::InnerIterator it(m, j); it; ++it)
      detail::mm_append_entry(out, it.row(), it.col(), static_cast<double>(it.value()));
  return fmt::to_string(out);
}

/// Writes `to_matrix_market(matrix)` to a file; false when the file cannot be written.
template <class Derived>
bool write_matrix_market(const std::filesystem::path& path,
                         const Eigen::MatrixBase<Derived>& matrix) {
  return detail::mm_write_file(path, to_matrix_market(matrix));
}

/// Writes `to_matrix_market(matrix)` to a file; false when the file cannot be written.
template <class Derived>
bool write_matrix_market(const std::filesystem::path& path,
                         const Eigen::SparseMatrixBase<Derived>& matrix) {
  return detail::mm_write_file(path, to_matrix_market(matrix));
}

}  // namespace qualify
