// qualify: a streaming reader for LP models in MPS (fixed or free format).
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <istream>
#include <limits>
#include <string>
#include <string_view>
#include <system_error>
#include <unordered_map>
#include <vector>

#include "qualify/report.hpp"

namespace qualify {

/// How data lines are split into fields.
enum class mps_format {
  /// Per data line: fixed columns when the line fits the fixed layout (blanks in every
  /// column between fields, nothing past column 61), blank-separated fields otherwise.
  /// Reads fixed files whose names contain blanks (Netlib's forplan) and free files.
  automatic,
  /// Fields are separated by blanks (free MPS); names cannot contain blanks.
  free,
  /// Fields sit in the fixed columns 2-3, 5-12, 15-22, 25-36, 40-47, 50-61; names may
  /// contain blanks.
  fixed
};

struct mps_options {
  mps_format format = mps_format::automatic;
};

/// An LP read from an MPS file: minimise objective^T x + objective_constant subject to
/// row_lower <= matrix x <= row_upper and col_lower <= x <= col_upper.
/// Missing bounds are +-infinity. When `ok()` is false only `error` and `error_line`
/// are meaningful.
struct mps_model {
  std::string name;                    ///< from the NAME line ("" when absent)
  std::string objective_name;          ///< the first N row
  std::vector<std::string> row_names;  ///< constraint rows, objective excluded, file order
  std::vector<std::string> col_names;  ///< columns, file order
  Eigen::VectorXd objective;           ///< one entry per column
  double objective_constant = 0.0;     ///< minus the RHS entry of the objective row
  Eigen::SparseMatrix<double> matrix;  ///< rows x columns; entries as given, zeros included
  Eigen::VectorXd row_lower, row_upper, col_lower, col_upper;
  std::vector<bool> col_integer;   ///< marked by BV/LI/UI; the LP relaxation ignores it
  Index objective_entries = 0;     ///< COLUMNS entries on the objective row
  std::vector<std::string> notes;  ///< things read but ignored or interpreted, by line
  std::string error;               ///< "line N: ..." when the file could not be read
  std::size_t error_line = 0;      ///< 1-based line of the error; 0 when there is none

  bool ok() const noexcept { return error.empty(); }
  /// Nonzeros as the Netlib readme counts them (objective row included).
  Index file_nonzeros() const noexcept { return matrix.nonZeros() + objective_entries; }
};

namespace detail {

class mps_reader {
 public:
  explicit mps_reader(const mps_options& options) : options_(options) {}

  mps_model read(std::istream& in) {
    std::string line;
    while (model_.ok() && std::getline(in, line)) {
      ++line_number_;
      if (!line.empty() && line.back() == '\r') line.pop_back();
      if (line.empty() || line[0] == '*') continue;
      if (line.find_first_not_of(" \t") == std::string::npos) continue;
      if (line[0] != ' ' && line[0] != '\t') {
        section_line(line);
      } else {
        data_line(line);
      }
      if (section_ == section::endata) break;
    }
    if (model_.ok() && in.bad()) fail("the stream failed while reading");
    if (model_.ok() && section_ != section::endata) {
      line_number_ = std::max<std::size_t>(line_number_, 1);  // the last line (1 when empty)
      fail("the file ends before ENDATA (truncated?)");
    }
    if (model_.ok()) finish();
    return std::move(model_);
  }

 private:
  enum class section { none, name, rows, columns, rhs, ranges, bounds, objsense, endata };
  enum class row_kind { objective, ignored_n, equal, less, greater };

  static constexpr double inf = std::numeric_limits<double>::infinity();

  void fail(const std::string& message) {
    if (!model_.ok()) return;
    model_.error_line = line_number_;
    model_.error = "line " + std::to_string(line_number_) + ": " + message;
  }
  void note(const std::string& message) {
    model_.notes.push_back("line " + std::to_string(line_number_) + ": " + message);
  }

  static std::vector<std::string> split_blanks(std::string_view text) {
    std::vector<std::string> fields;
    std::size_t i = 0;
    while (i < text.size()) {
      while (i < text.size() && (text[i] == ' ' || text[i] == '\t')) ++i;
      std::size_t j = i;
      while (j < text.size() && text[j] != ' ' && text[j] != '\t') ++j;
      if (j > i) fields.emplace_back(text.substr(i, j - i));
      i = j;
    }
    return fields;
  }

  // Fixed MPS columns (1-based): 2-3, 5-12, 15-22, 25-36, 40-47, 50-61. Empty fields are
  // kept as "" so that a missing set name stays visible.
  static std::vector<std::string> split_fixed(const std::string& line) {
    static constexpr std::size_t start[6] = {1, 4, 14, 24, 39, 49};
    static constexpr std::size_t width[6] = {2, 8, 8, 12, 8, 12};
    std::vector<std::string> fields;
    for (int k = 0; k < 6; ++k) {
      std::string f = start[k] < line.size() ? line.substr(start[k], width[k]) : std::string();
      auto b = f.find_first_not_of(" \t");
      auto e = f.find_last_not_of(" \t");
      fields.push_back(b == std::string::npos ? std::string() : f.substr(b, e - b + 1));
    }
    return fields;
  }

  bool parse_number(const std::string& text, double& value) {
    if (text.empty()) {
      fail("a number is missing");
      return false;
    }
    errno = 0;
    char* end = nullptr;
    value = std::strtod(text.c_str(), &end);
    if (end != text.c_str() + text.size() || errno == ERANGE || !std::isfinite(value)) {
      fail("'" + text + "' is not a finite number");
      return false;
    }
    return true;
  }

  void section_line(const std::string& line) {
    auto fields = split_blanks(line);
    const std::string& key = fields[0];
    if (key == "NAME") {
      section_ = section::name;
      if (fields.size() > 1) model_.name = line.substr(line.find(fields[1]));
      while (!model_.name.empty() && model_.name.back() == ' ') model_.name.pop_back();
      return;
    }
    if (key == "OBJSENSE") {
      section_ = section::objsense;
      if (fields.size() > 1) objsense(fields[1]);
      return;
    }
    if (key == "ROWS") {
      section_ = section::rows;
      return;
    }
    if (key == "COLUMNS") {
      expect_after(section::rows, key);
      section_ = section::columns;
      return;
    }
    if (key == "RHS") {
      expect_after(section::columns, key);
      section_ = section::rhs;
      return;
    }
    if (key == "RANGES") {
      expect_after(section::columns, key);
      section_ = section::ranges;
      return;
    }
    if (key == "BOUNDS") {
      expect_after(section::columns, key);
      section_ = section::bounds;
      return;
    }
    if (key == "ENDATA") {
      section_ = section::endata;
      return;
    }
    fail("unknown section '" + key + "'");
  }

  void expect_after(section earliest, const std::string& key) {
    if (section_ < earliest) fail("section " + key + " comes too early");
  }

  void objsense(const std::string& word) {
    if (word == "MAX" || word == "MAXIMIZE")
      maximise_ = true;
    else if (word == "MIN" || word == "MINIMIZE")
      maximise_ = false;
    else
      fail("OBJSENSE must be MIN or MAX, not '" + word + "'");
  }

  // True when every character outside the fixed fields is blank.
  static bool fits_fixed(const std::string& line) {
    if (line.size() > 61) return false;
    for (std::size_t c : {0, 3, 12, 13, 22, 23, 36, 37, 38, 47, 48})
      if (c < line.size() && line[c] != ' ') return false;
    return true;
  }

  static bool is_number(const std::string& text) {
    if (text.empty()) return false;
    char* end = nullptr;
    std::strtod(text.c_str(), &end);
    return end == text.c_str() + text.size();
  }

  // A fixed split makes sense for the section: the fields it needs are there, the value
  // fields are numbers, and pairs are complete. Guards against free lines that happen
  // to leave the separator columns blank (" UP BND x 4").
  bool fixed_well_formed(const std::vector<std::string>& f) const {
    auto has = [&](std::size_t k) { return !f[k].empty(); };
    auto pair_ok = [&](std::size_t name, std::size_t value) {
      return has(name) == has(value) && (!has(value) || is_number(f[value]));
    };
    switch (section_) {
      case section::rows:
        return has(0) && has(1) && !has(2);
      case section::columns:
      case section::rhs:
      case section::ranges:
        return (section_ != section::columns || has(1)) && has(2) && has(3) && is_number(f[3]) &&
               pair_ok(4, 5);
      case section::bounds:
        return has(0) && has(2) && (!has(3) || is_number(f[3])) && !has(4);
      default:
        return false;
    }
  }

  std::vector<std::string> fields_of(const std::string& line) {
    std::vector<std::string> f;
    if (options_.format != mps_format::free && fits_fixed(line)) f = split_fixed(line);
    fixed_line_ = options_.format == mps_format::fixed ||
                  (options_.format == mps_format::automatic && !f.empty() && fixed_well_formed(f));
    if (!fixed_line_) return split_blanks(line);
    if (f.empty()) f = split_fixed(line);
    while (!f.empty() && f.back().empty()) f.pop_back();
    return f;
  }

  void data_line(const std::string& line) {
    if (line.find("'MARKER'") != std::string::npos) {
      fail("MARKER lines (integer sections) are not supported by this LP reader");
      return;
    }
    auto f = fields_of(line);
    switch (section_) {
      case section::rows:
        return rows_line(f);
      case section::columns:
        return columns_line(f);
      case section::rhs:
        return rhs_ranges_line(f, false);
      case section::ranges:
        return rhs_ranges_line(f, true);
      case section::bounds:
        return bounds_line(f);
      case section::objsense:
        return f.empty() ? void() : objsense(f[0]);
      default:
        fail("a data line outside any section");
        return;
    }
  }

  void rows_line(const std::vector<std::string>& f) {
    // Fixed format puts the type in field 1 and the name in field 2; free format has 2 tokens.
    std::vector<std::string> g;
    for (const auto& s : f)
      if (!s.empty()) g.push_back(s);
    if (g.size() != 2) {
      fail("a ROWS line needs a type and a name");
      return;
    }
    row_kind kind;
    if (g[0] == "N")
      kind = objective_seen_ ? row_kind::ignored_n : row_kind::objective;
    else if (g[0] == "E")
      kind = row_kind::equal;
    else if (g[0] == "L")
      kind = row_kind::less;
    else if (g[0] == "G")
      kind = row_kind::greater;
    else {
      fail("row type '" + g[0] + "' is not N, E, L or G");
      return;
    }
    if (row_index_.count(g[1])) {
      fail("row '" + g[1] + "' is declared twice");
      return;
    }
    if (kind == row_kind::objective) {
      objective_seen_ = true;
      model_.objective_name = g[1];
      row_index_[g[1]] = objective_row;
    } else if (kind == row_kind::ignored_n) {
      note("free row '" + g[1] + "' (a further N row) is ignored");
      row_index_[g[1]] = ignored_row;
    } else {
      row_index_[g[1]] = static_cast<Index>(kinds_.size());
      kinds_.push_back(kind);
      model_.row_names.push_back(g[1]);
    }
  }

  // Returns the row index, objective_row, ignored_row, or unknown_row (after failing).
  Index find_row(const std::string& name) {
    auto it = row_index_.find(name);
    if (it == row_index_.end()) {
      fail("unknown row '" + name + "'");
      return unknown_row;
    }
    return it->second;
  }

  void columns_line(const std::vector<std::string>& f) {
    // Fields: [empty type,] column, row, value [, row, value].
    std::size_t k = fixed_line_ ? 1 : 0;
    if (f.size() != k + 3 && f.size() != k + 5) {
      fail("a COLUMNS line needs a column and one or two (row, value) pairs");
      return;
    }
    const std::string& col = f[k];
    if (col != current_col_name_) {
      if (col_index_.count(col)) {
        fail("the entries of column '" + col + "' are not contiguous");
        return;
      }
      col_index_[col] = static_cast<Index>(model_.col_names.size());
      model_.col_names.push_back(col);
      objective_.push_back(0.0);
      current_col_name_ = col;
    }
    Index j = static_cast<Index>(model_.col_names.size()) - 1;
    for (std::size_t p = k + 1; p + 1 < f.size() && model_.ok(); p += 2) {
      Index i = find_row(f[p]);
      double value = 0.0;
      if (i == unknown_row || !parse_number(f[p + 1], value)) return;
      if (i == ignored_row) continue;
      if (i == objective_row) {
        if (objective_set_col_ == j) {
          fail("column '" + col + "' has two objective entries");
          return;
        }
        objective_set_col_ = j;
        objective_[static_cast<std::size_t>(j)] = value;
        ++model_.objective_entries;
        continue;
      }
      if (stamp_.size() < kinds_.size()) stamp_.resize(kinds_.size(), -1);
      if (stamp_[static_cast<std::size_t>(i)] == j) {
        fail("column '" + col + "' has two entries in row '" + f[p] + "'");
        return;
      }
      stamp_[static_cast<std::size_t>(i)] = j;
      triplets_.emplace_back(i, j, value);
    }
  }

  void rhs_ranges_line(const std::vector<std::string>& f, bool ranges) {
    const char* what = ranges ? "RANGES" : "RHS";
    // Free format: [set,] row, value [, row, value]; an even count means no set name.
    std::size_t k;
    if (fixed_line_) {
      k = 2;
      if (f.size() != 4 && f.size() != 6) {
        fail(std::string("a ") + what + " line needs one or two (row, value) pairs");
        return;
      }
    } else {
      if (f.size() == 2 || f.size() == 4)
        k = 0;
      else if (f.size() == 3 || f.size() == 5)
        k = 1;
      else {
        fail(std::string("a ") + what + " line needs one or two (row, value) pairs");
        return;
      }
    }
    if (rhs_.size() < kinds_.size()) {
      rhs_.resize(kinds_.size(), 0.0);
      range_.resize(kinds_.size(), std::numeric_limits<double>::quiet_NaN());
    }
    for (std::size_t p = k; p + 1 < f.size() && model_.ok(); p += 2) {
      Index i = find_row(f[p]);
      double value = 0.0;
      if (i == unknown_row || !parse_number(f[p + 1], value)) return;
      if (i == ignored_row) continue;
      if (i == objective_row) {
        if (ranges) {
          fail("a range on the objective row");
          return;
        }
        // The RHS of the objective row is minus the objective's constant term (the usual
        // reading; Netlib's e226 relies on it).
        model_.objective_constant = -value;
        continue;
      }
      auto r = static_cast<std::size_t>(i);
      if (ranges)
        range_[r] = value;
      else
        rhs_[r] = value;
    }
  }

  void bounds_line(const std::vector<std::string>& f) {
    // Fields: type, [set,] column [, value].
    std::vector<std::string> g = f;
    if (g.empty()) {
      fail("an empty BOUNDS line");
      return;
    }
    const std::string type = g[0];
    const bool needs_value = !(type == "FR" || type == "MI" || type == "PL" || type == "BV");
    std::string col;
    std::string value_text;
    if (fixed_line_) {
      g.resize(4);
      col = g[2];
      value_text = g[3];
    } else {
      // Without a value: type [set] column; with one: type [set] column value.
      std::size_t n = g.size();
      if (needs_value) {
        if (n != 3 && n != 4) {
          fail("a " + type + " bound needs a column and a value");
          return;
        }
        col = g[n - 2];
        value_text = g[n - 1];
      } else {
        // BV may carry a value (ignored); FR/MI/PL may too in some writers.
        if (n < 2 || n > 4) {
          fail("a " + type + " bound needs a column");
          return;
        }
        col = n == 2 ? g[1] : g[2];
        if (n == 4) value_text = g[3];
        if (n == 3 && col_index_.count(g[1]) && !col_index_.count(g[2])) col = g[1];
      }
    }
    auto it = col_index_.find(col);
    if (it == col_index_.end()) {
      fail("bound on unknown column '" + col + "'");
      return;
    }
    auto j = static_cast<std::size_t>(it->second);
    if (lower_.size() < model_.col_names.size()) {
      lower_.resize(model_.col_names.size(), 0.0);
      upper_.resize(model_.col_names.size(), inf);
      integer_.resize(model_.col_names.size(), false);
      bound_line_.resize(model_.col_names.size(), 0);
    }
    bound_line_[j] = line_number_;
    double value = 0.0;
    if (needs_value && !parse_number(value_text, value)) return;
    if (type == "UP") {
      // Convention (as most readers since the original MPS codes): a negative upper bound
      // on a column whose lower bound is still the default 0 makes the lower bound -inf.
      if (value < 0.0 && lower_[j] == 0.0) {
        lower_[j] = -inf;
        note("negative UP bound on '" + col + "' with lower bound 0: lower bound set to -inf");
      }
      upper_[j] = value;
    } else if (type == "LO") {
      lower_[j] = value;
    } else if (type == "FX") {
      lower_[j] = upper_[j] = value;
    } else if (type == "FR") {
      lower_[j] = -inf;
      upper_[j] = inf;
    } else if (type == "MI") {
      lower_[j] = -inf;
    } else if (type == "PL") {
      upper_[j] = inf;
    } else if (type == "BV") {
      lower_[j] = 0.0;
      upper_[j] = 1.0;
      integer_[j] = true;
    } else if (type == "LI") {
      lower_[j] = value;
      integer_[j] = true;
    } else if (type == "UI") {
      upper_[j] = value;
      integer_[j] = true;
    } else {
      fail("bound type '" + type + "' is not UP, LO, FX, FR, MI, PL, BV, LI or UI");
    }
  }

  void finish() {
    if (!objective_seen_) {
      fail("the ROWS section has no N (objective) row");
      return;
    }
    const auto m = static_cast<Index>(kinds_.size());
    const auto n = static_cast<Index>(model_.col_names.size());
    rhs_.resize(kinds_.size(), 0.0);
    range_.resize(kinds_.size(), std::numeric_limits<double>::quiet_NaN());
    lower_.resize(model_.col_names.size(), 0.0);
    upper_.resize(model_.col_names.size(), inf);
    integer_.resize(model_.col_names.size(), false);

    model_.matrix.resize(m, n);
    model_.matrix.setFromTriplets(triplets_.begin(), triplets_.end());
    model_.matrix.makeCompressed();
    model_.objective = Eigen::Map<const Eigen::VectorXd>(objective_.data(), n);
    if (maximise_) {
      model_.objective = -model_.objective;
      model_.objective_constant = -model_.objective_constant;
      model_.notes.push_back("OBJSENSE MAX: objective negated to a minimisation");
    }
    model_.row_lower.resize(m);
    model_.row_upper.resize(m);
    for (Index i = 0; i < m; ++i) {
      auto r = static_cast<std::size_t>(i);
      double b = rhs_[r];
      double lo = -inf, up = inf;
      switch (kinds_[r]) {
        case row_kind::equal:
          lo = up = b;
          break;
        case row_kind::less:
          up = b;
          break;
        case row_kind::greater:
          lo = b;
          break;
        default:
          break;
      }
      double range = range_[r];
      if (!std::isnan(range)) {
        // Standard MPS range rules: L -> [b-|R|, b], G -> [b, b+|R|],
        // E -> [b, b+|R|] when R > 0 and [b-|R|, b] when R < 0.
        switch (kinds_[r]) {
          case row_kind::less:
            lo = b - std::abs(range);
            break;
          case row_kind::greater:
            up = b + std::abs(range);
            break;
          case row_kind::equal:
            if (range > 0)
              up = b + range;
            else
              lo = b + range;
            break;
          default:
            break;
        }
      }
      model_.row_lower[i] = lo;
      model_.row_upper[i] = up;
    }
    model_.col_lower = Eigen::Map<const Eigen::VectorXd>(lower_.data(), n);
    model_.col_upper = Eigen::Map<const Eigen::VectorXd>(upper_.data(), n);
    model_.col_integer = integer_;
    for (Index j = 0; j < n; ++j) {
      if (model_.col_lower[j] > model_.col_upper[j]) {
        line_number_ = bound_line_[static_cast<std::size_t>(j)];
        fail("column '" + model_.col_names[static_cast<std::size_t>(j)] +
             "' ends with its lower bound above its upper bound");
        return;
      }
    }
    if (std::find(integer_.begin(), integer_.end(), true) != integer_.end())
      model_.notes.push_back(
          "integer bound types (BV/LI/UI) read; the LP relaxation ignores integrality");
  }

  static constexpr Index objective_row = -1;
  static constexpr Index ignored_row = -2;
  static constexpr Index unknown_row = -3;

  mps_options options_;
  bool fixed_line_ = false;  // how the current data line was split
  mps_model model_;
  std::size_t line_number_ = 0;
  section section_ = section::none;
  bool objective_seen_ = false;
  bool maximise_ = false;
  std::unordered_map<std::string, Index> row_index_, col_index_;
  std::vector<row_kind> kinds_;
  std::string current_col_name_;
  Index objective_set_col_ = -1;
  std::vector<double> objective_;
  std::vector<Index> stamp_;
  std::vector<Eigen::Triplet<double, Index>> triplets_;
  std::vector<double> rhs_, range_, lower_, upper_;
  std::vector<bool> integer_;
  std::vector<std::size_t> bound_line_;
};

}  // namespace detail

/// Reads an MPS model from a stream. Never throws for the contents of the file: a bad
/// file gives a model whose `error` names the line.
inline mps_model read_mps(std::istream& in, const mps_options& options = {}) {
  return detail::mps_reader(options).read(in);
}

/// Reads an MPS model from a file. A file that cannot be opened (missing, a directory, no
/// permission) is reported in `error` as "cannot open 'PATH': reason", with error_line 0.
inline mps_model read_mps_file(const std::string& path, const mps_options& options = {}) {
  const auto cannot_open = [&](const std::string& reason) {
    mps_model model;
    model.error = "cannot open '" + path + "': " + reason;
    return model;
  };
  // An ifstream opens a directory and only fails on the first read, as a "line 0" error.
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) return cannot_open("it is a directory");
  std::ifstream in(path);
  if (!in) return cannot_open(std::strerror(errno));
  return read_mps(in, options);
}

}  // namespace qualify
