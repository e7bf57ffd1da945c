// qualify command: reading the inputs commands share (Matrix Market Jacobians, labels, numbers).
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <charconv>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <qualify/matrix_market.hpp>
#include <qualify/mps.hpp>
#include <string>
#include <string_view>
#include <system_error>
#include <unordered_map>
#include <vector>

#include "cli.hpp"

namespace qualify_cli {

/// A number in the open interval (0, 1), the whole text parsed (no trailing characters, no
/// leading '+' or blanks; NaN and Inf refused): the form of relative tolerances.
inline std::optional<double> parse_open_unit(std::string_view text) {
  double value = 0;
  const char* last = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(text.data(), last, value, std::chars_format::general);
  if (text.empty() || ec != std::errc() || ptr != last) return std::nullopt;
  if (!(std::isfinite(value) && value > 0 && value < 1)) return std::nullopt;
  return value;
}

/// A Jacobian as its file stores it: coordinate files sparse, array files dense.
struct jacobian_input {
  std::optional<Eigen::MatrixXd> dense;
  std::optional<Eigen::SparseMatrix<double>> sparse;
  Eigen::Index rows() const { return dense ? dense->rows() : sparse->rows(); }
  Eigen::Index cols() const { return dense ? dense->cols() : sparse->cols(); }
  /// Holds the matrix sparse from now on (to check it beside a sparse one).
  void make_sparse() {
    if (!dense) return;
    sparse = dense->sparseView(0.0, 0.0);
    dense.reset();
  }
};

/// The Jacobian in a Matrix Market file ('-': standard input). Coordinate files are assembled
/// sparse (duplicates summed) for the sparse check; array files dense, within the reader's
/// matrix_market_options::max_dense_entries (2^26 entries, 512 MiB): larger ones are refused
/// with a message, since that path holds every entry.
inline result<jacobian_input> read_jacobian(const std::string& path) {
  const qualify::matrix_market_options options;
  const qualify::matrix_market_data data =
      path == "-" ? qualify::read_matrix_market(std::cin, options)
                  : qualify::read_matrix_market(std::filesystem::path(path), options);
  if (!data.ok) {
    if (data.error == qualify::read_error::cannot_open)  // the message names the file
      return problem{exit_code::no_input, path == "-" ? "<stdin>: " + data.message : data.message,
                     path, std::nullopt};
    return problem{exit_code::data, shown_name(path) + ": " + data.message, path, data.line};
  }
  jacobian_input out;
  if (data.format == qualify::matrix_market_format::coordinate) {
    auto sparse = qualify::to_sparse(data);
    if (!sparse.ok)
      return problem{exit_code::data, shown_name(path) + ": " + sparse.message, path, std::nullopt};
    out.sparse = std::move(sparse.matrix);
    return out;
  }
  auto dense = qualify::to_dense(data, options);
  if (!dense.ok)
    return problem{exit_code::data,
                   fmt::format("{}: the size line announces a {} x {} matrix, more than the {} "
                               "entries (max_dense_entries, {} MiB) an array file may hold; "
                               "write it in coordinate form to have it checked sparse",
                               shown_name(path), data.rows, data.cols, options.max_dense_entries,
                               options.max_dense_entries * sizeof(double) >> 20),
                   path, std::nullopt};
  out.dense = std::move(dense.matrix);
  return out;
}

/// An LP model in an MPS file ('-': standard input): 66 when it cannot be opened, 65 with the
/// line when its content is malformed.
inline result<qualify::mps_model> read_mps_model(const std::string& path) {
  const std::string shown = shown_name(path);
  std::ifstream probe;  // 66 here; the reader opens the file itself
  if (const auto opened = open_input(path, probe); !opened) return opened.error();
  qualify::mps_model model =
      path == "-" ? qualify::read_mps(std::cin) : qualify::read_mps_file(path);
  if (!model.ok())
    return problem{exit_code::data, fmt::format("{}: {}", shown, model.error), path,
                   model.error_line ? std::optional<std::size_t>(model.error_line) : std::nullopt};
  return model;
}

/// Limits of a labels file.
struct labels_options {
  /// A line is refused when its length in bytes (newline excluded) > max_line_length: labels
  /// are names, and the limit stops a binary file from being buffered whole.
  std::size_t max_line_length = 4096;
};

/// Labels, one per line, in row order. Leading and trailing blanks and a CR before the newline
/// are dropped; blank lines at the end are ignored. Refused (exit 65, with the line): a blank
/// line before the last label, a control byte, bytes that are not UTF-8, an overlong line,
/// a label given twice (findings would name two rows alike).
inline result<std::vector<std::string>> read_labels(const std::string& path,
                                                    const labels_options& options = {}) {
  const std::string shown = shown_name(path);
  std::ifstream file;
  const auto opened = open_input(path, file);
  if (!opened) return opened.error();
  std::istream* in = *opened;
  const auto bad = [&](std::size_t line, std::string what) {
    return problem{exit_code::data, fmt::format("{}: line {}: {}", shown, line, what), path, line};
  };

  std::vector<std::string> labels;
  std::unordered_map<std::string, std::size_t> first_line;  // label -> its line
  std::size_t line_no = 0;
  std::optional<std::size_t> blank_line;  // the first blank line after the last label so far
  std::optional<problem> failure;
  const auto take = [&](std::string_view text) {
    ++line_no;
    if (line_no == 1 && text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);  // BOM
    if (!text.empty() && text.back() == '\r') text.remove_suffix(1);
    while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
    while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
    if (text.empty()) {
      if (!blank_line) blank_line = line_no;
      return true;
    }
    if (blank_line) {
      failure = bad(*blank_line, fmt::format("blank line before the label on line {}; every row "
                                             "needs a label, one per line",
                                             line_no));
      return false;
    }
    for (std::size_t i = 0; i < text.size();) {
      const auto c = static_cast<unsigned char>(text[i]);
      if (c < 0x20 || c == 0x7f) {
        failure = bad(line_no, fmt::format("control byte 0x{:02x} at byte {} (is this a labels "
                                           "file?)",
                                           c, i + 1));
        return false;
      }
      const std::size_t n = utf8_sequence_length(text, i);
      if (n == 0) {
        failure = bad(line_no, fmt::format("byte {} is not valid UTF-8", i + 1));
        return false;
      }
      i += n;
    }
    const auto [it, fresh] = first_line.emplace(std::string(text), line_no);
    if (!fresh) {
      failure = bad(line_no, fmt::format("the label '{}' is already on line {}", text, it->second));
      return false;
    }
    labels.emplace_back(text);
    return true;
  };

  // Chunked reading, so that a line without end is caught at max_line_length.
  std::string pending;
  std::vector<char> chunk(std::size_t{1} << 16);
  for (;;) {
    in->read(chunk.data(), static_cast<std::streamsize>(chunk.size()));
    if (in->bad())
      return problem{exit_code::no_input, fmt::format("reading {} failed (I/O error)", shown), path,
                     std::nullopt};
    const auto got = static_cast<std::size_t>(in->gcount());
    pending.append(chunk.data(), got);
    std::size_t begin = 0;
    for (std::size_t stop; (stop = pending.find('\n', begin)) != std::string::npos;
         begin = stop + 1) {
      if (stop - begin > options.max_line_length)
        return bad(line_no + 1,
                   fmt::format("longer than {} bytes (max_line_length)", options.max_line_length));
      if (!take(std::string_view(pending).substr(begin, stop - begin))) return *failure;
    }
    pending.erase(0, begin);
    if (pending.size() > options.max_line_length)
      return bad(line_no + 1,
                 fmt::format("longer than {} bytes (max_line_length)", options.max_line_length));
    if (got == 0 || !in->good()) break;
  }
  if (!pending.empty() && !take(pending)) return *failure;
  return labels;
}

}  // namespace qualify_cli
