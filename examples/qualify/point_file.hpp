// qualify command: reading POINT.json, a model evaluated at one point (the schema is in the
// README, section "POINT.json"), into qualify::model_at_point and the given multipliers.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <initializer_list>
#include <iostream>
#include <optional>
#include <qualify/model.hpp>
#include <string>
#include <string_view>
#include <system_error>
#include <unordered_map>
#include <vector>

#include "cli.hpp"
#include "json_read.hpp"

namespace qualify_cli {

/// What a point file holds: the model at the point, and the multipliers when the file gives
/// them, one per constraint in the order of `model` (the file's order of `constraints`).
struct point_file {
  qualify::model_at_point model;
  std::optional<Eigen::VectorXd> multipliers;
};

/// Limits of the point reader.
struct point_read_options {
  /// A file longer than this many bytes is refused (exit 65) before it is parsed: the parsed
  /// tree takes about 100 bytes per number, so 256 MiB of text can take a few GiB.
  std::size_t max_bytes = std::size_t{1} << 28;
  json_read_options json;
};

namespace detail {

// Walks the parsed document; every error names the JSON path and the position of the value.
class point_schema {
 public:
  explicit point_schema(std::string_view text) : text_(text) {}

  result<point_file> read(const json_value& root) {
    point_file out;
    if (!object(root, "", {"x", "objective", "constraints", "multipliers", "convex_model"},
                {"x", "objective", "constraints"}))
      return *error_;
    qualify::model_at_point& m = out.model;
    if (!numbers(*root.find("x"), "x", std::nullopt, m.x)) return *error_;
    const Eigen::Index n = m.x.size();
    if (n == 0) return fail(*root.find("x"), "x", "expected at least one number, got none");

    const json_value& objective = *root.find("objective");
    if (!object(objective, "objective", {"gradient", "hessian"}, {"gradient"}) ||
        !numbers(*objective.find("gradient"), "objective.gradient", n, m.objective_gradient))
      return *error_;
    if (const json_value* h = objective.find("hessian")) {
      m.objective_hessian.emplace();
      if (!square_matrix(*h, "objective.hessian", n, *m.objective_hessian)) return *error_;
    }

    const json_value& constraints = *root.find("constraints");
    if (!is_kind(constraints, "constraints", json_kind::array)) return *error_;
    const auto count = static_cast<Eigen::Index>(constraints.items.size());
    m.values.resize(count);
    m.jacobian.resize(count, n);
    m.hessians.resize(constraints.items.size());
    std::unordered_map<std::string, std::size_t> row_of;  // name -> constraint index
    for (std::size_t i = 0; i < constraints.items.size(); ++i) {
      const json_value& c = constraints.items[i];
      const std::string path = json_path_index("constraints", i);
      if (!object(c, path, {"name", "type", "kind", "value", "gradient", "hessian"},
                  {"name", "type", "kind", "value", "gradient"}))
        return *error_;
      const json_value& name = *c.find("name");
      const std::string name_path = path + ".name";
      if (!is_kind(name, name_path, json_kind::string)) return *error_;
      if (name.text.empty()) return fail(name, name_path, "expected a non-empty name");
      const auto [it, fresh] = row_of.emplace(name.text, i);
      if (!fresh)
        return fail(name, name_path,
                    fmt::format("\"{}\" is already the name of constraints[{}]; names must be "
                                "unique",
                                name.text, it->second));
      m.labels.push_back(name.text);

      const json_value& type = *c.find("type");
      const std::optional<std::size_t> t = choice(type, path + ".type", {"ineq", "eq"});
      if (!t) return *error_;
      m.types.push_back(*t == 0 ? qualify::constraint_type::inequality
                                : qualify::constraint_type::equality);

      using kind = qualify::constraint_kind;
      constexpr kind kinds[] = {kind::affine, kind::convex, kind::nonlinear, kind::unknown};
      const std::optional<std::size_t> k =
          choice(*c.find("kind"), path + ".kind", {"affine", "convex", "nonlinear", "unknown"});
      if (!k) return *error_;
      m.kinds.push_back(kinds[*k]);

      double value = 0;
      if (!number(*c.find("value"), path + ".value", value)) return *error_;
      m.values(static_cast<Eigen::Index>(i)) = value;
      Eigen::VectorXd gradient;
      if (!numbers(*c.find("gradient"), path + ".gradient", n, gradient)) return *error_;
      m.jacobian.row(static_cast<Eigen::Index>(i)) = gradient.transpose();
      if (const json_value* h = c.find("hessian")) {
        m.hessians[i].emplace();
        if (!square_matrix(*h, path + ".hessian", n, *m.hessians[i])) return *error_;
      }
    }

    if (const json_value* given = root.find("multipliers")) {
      if (!is_kind(*given, "multipliers", json_kind::object)) return *error_;
      Eigen::VectorXd lambda(count);
      std::vector<bool> seen(constraints.items.size(), false);
      for (std::size_t j = 0; j < given->keys.size(); ++j) {
        const std::string path = json_path_member("multipliers", given->keys[j]);
        const auto row = row_of.find(given->keys[j]);
        if (row == row_of.end())
          return fail(given->items[j], path,
                      fmt::format("no constraint is named \"{}\"", valid_utf8(given->keys[j])));
        if (!number(given->items[j], path, lambda(static_cast<Eigen::Index>(row->second))))
          return *error_;
        seen[row->second] = true;
      }
      std::vector<std::string> missing;
      for (std::size_t i = 0; i < seen.size(); ++i)
        if (!seen[i]) missing.push_back("\"" + m.labels[i] + "\"");
      if (!missing.empty()) {
        const std::size_t shown = std::min<std::size_t>(missing.size(), 10);
        std::string list;
        for (std::size_t i = 0; i < shown; ++i) list += (i ? ", " : "") + missing[i];
        if (missing.size() > shown) list += fmt::format(" and {} more", missing.size() - shown);
        return fail(*given, "multipliers",
                    fmt::format("no value for {} of the {} constraints: {} (give one for every "
                                "constraint, or leave multipliers out)",
                                missing.size(), count, list));
      }
      out.multipliers = std::move(lambda);
    }

    if (const json_value* convex = root.find("convex_model")) {
      if (!is_kind(*convex, "convex_model", json_kind::boolean)) return *error_;
      m.convex_model = convex->boolean;
    }
    return out;
  }

 private:
  std::string_view text_;
  std::optional<problem> error_;

  problem fail(const json_value& at, std::string_view path, std::string_view what) {
    const json_position p = position_of(text_, at.offset);
    error_ = problem{exit_code::data,
                     fmt::format("line {}, column {}: {}: {}", p.line, p.column,
                                 path.empty() ? "the top-level value" : path, what),
                     std::nullopt, p.line};
    return *error_;
  }

  bool is_kind(const json_value& v, std::string_view path, json_kind want) {
    if (v.kind == want) return true;
    fail(v, path, fmt::format("expected {}, got {}", to_string(want), to_string(v.kind)));
    return false;
  }

  bool number(const json_value& v, std::string_view path, double& out) {
    if (!is_kind(v, path, json_kind::number)) return false;
    out = v.number;  // finite: the JSON reader refuses numbers beyond a double's range
    return true;
  }

  // An object whose keys are all in `allowed` and that has every key in `required`. Unknown
  // keys are refused: a misspelt optional key ("hesian") would otherwise be dropped silently.
  bool object(const json_value& v, std::string_view path,
              std::initializer_list<std::string_view> allowed,
              std::initializer_list<std::string_view> required) {
    if (!is_kind(v, path, json_kind::object)) return false;
    for (std::size_t i = 0; i < v.keys.size(); ++i) {
      bool known = false;
      for (const auto key : allowed) known = known || key == v.keys[i];
      if (!known) {
        std::string list;
        for (const auto key : allowed)
          list += fmt::format("{}\"{}\"", list.empty() ? "" : ", ", key);
        fail(v.items[i], json_path_member(path, v.keys[i]),
             fmt::format("unknown key; expected one of {}", list));
        return false;
      }
    }
    for (const auto key : required)
      if (!v.find(key)) {
        fail(v, path, fmt::format("missing key \"{}\"", key));
        return false;
      }
    return true;
  }

  // A string among `choices`; the answer is its index.
  std::optional<std::size_t> choice(const json_value& v, std::string_view path,
                                    std::initializer_list<std::string_view> choices) {
    if (!is_kind(v, path, json_kind::string)) return std::nullopt;
    std::size_t index = 0;
    std::string list;
    for (const auto c : choices) {
      if (v.text == c) return index;
      list += fmt::format("{}\"{}\"", index++ ? ", " : "", c);
    }
    fail(v, path, fmt::format("expected one of {}, got \"{}\"", list, valid_utf8(v.text)));
    return std::nullopt;
  }

  // An array of numbers, of length `size` when given.
  bool numbers(const json_value& v, std::string_view path, std::optional<Eigen::Index> size,
               Eigen::VectorXd& out) {
    if (!is_kind(v, path, json_kind::array)) return false;
    const auto got = static_cast<Eigen::Index>(v.items.size());
    if (size && got != *size) {
      fail(v, path, fmt::format("expected {} numbers (the length of x), got {}", *size, got));
      return false;
    }
    out.resize(got);
    for (Eigen::Index i = 0; i < got; ++i)
      if (!number(v.items[static_cast<std::size_t>(i)],
                  json_path_index(path, static_cast<std::size_t>(i)), out(i)))
        return false;
    return true;
  }

  // An n x n matrix as an array of n rows of n numbers. Symmetry is left to the checks.
  bool square_matrix(const json_value& v, std::string_view path, Eigen::Index n,
                     Eigen::MatrixXd& out) {
    if (!is_kind(v, path, json_kind::array)) return false;
    if (static_cast<Eigen::Index>(v.items.size()) != n) {
      fail(v, path, fmt::format("expected {} rows (the length of x), got {}", n, v.items.size()));
      return false;
    }
    out.resize(n, n);
    Eigen::VectorXd row;
    for (Eigen::Index i = 0; i < n; ++i) {
      if (!numbers(v.items[static_cast<std::size_t>(i)],
                   json_path_index(path, static_cast<std::size_t>(i)), n, row))
        return false;
      out.row(i) = row.transpose();
    }
    return true;
  }
};

}  // namespace detail

/// Reads a point document from memory. A failure is a `problem` with code exit_code::data
/// (65) and a message "line L, column C: PATH: what was expected, what was found"; `line` is
/// set, `file` is not.
inline result<point_file> read_point_json(std::string_view text,
                                          const point_read_options& options = {}) {
  if (text.size() > options.max_bytes)
    return problem{exit_code::data,
                   fmt::format("{} bytes, more than the {} (point_read_options::max_bytes) a "
                               "point file may have",
                               text.size(), options.max_bytes),
                   std::nullopt, std::nullopt};
  const json_parse_result parsed = parse_json(text, options.json);
  if (!parsed.ok())
    return problem{exit_code::data, parsed.error.message, std::nullopt, parsed.error.line};
  return detail::point_schema(text).read(*parsed.value);
}

/// Reads a point file ('-': standard input). Cannot open or read it: exit_code::no_input (66),
/// the message naming the file and the reason. Malformed: exit_code::data (65), the message
/// "'FILE': line L, column C: PATH: ...", with `file` and `line` set.
inline result<point_file> read_point_file(const std::string& path,
                                          const point_read_options& options = {}) {
  const std::string shown = shown_name(path);
  std::ifstream file;
  const auto opened = open_input(path, file);
  if (!opened) return opened.error();
  std::istream* in = *opened;
  // Read at most max_bytes + 1 bytes, so that an endless stream stops at the limit.
  std::string text;
  std::vector<char> chunk(std::size_t{1} << 16);
  while (text.size() <= options.max_bytes) {
    in->read(chunk.data(), static_cast<std::streamsize>(chunk.size()));
    if (in->bad())
      return problem{exit_code::no_input, fmt::format("reading {} failed (I/O error)", shown), path,
                     std::nullopt};
    text.append(chunk.data(), static_cast<std::size_t>(in->gcount()));
    if (!in->good()) break;
  }
  auto point = read_point_json(text, options);
  if (point) return point;
  problem p = point.error();
  p.message = shown + ": " + p.message;
  p.file = path;
  return p;
}

}  // namespace qualify_cli
