// qualify: the verdicts, findings and row naming that every report shares.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

namespace qualify {

using Index = Eigen::Index;

/// The answer of a check. `not_checked` is what a default-constructed report says.
enum class verdict { not_checked, holds, fails, undecided, invalid_input };

/// Stable strings (JSON, logs); never renamed once released.
constexpr std::string_view to_string(verdict v) noexcept {
  switch (v) {
    case verdict::holds: return "holds";
    case verdict::fails: return "fails";
    case verdict::undecided: return "undecided";
    case verdict::invalid_input: return "invalid_input";
    case verdict::not_checked: break;
  }
  return "not_checked";
}

enum class severity { info, warning, error };

constexpr std::string_view to_string(severity s) noexcept {
  switch (s) {
    case severity::warning: return "warning";
    case severity::error: return "error";
    case severity::info: break;
  }
  return "info";
}

/// One observation a check made: a stable code (see the README's table of codes),
/// a sentence for a person, and the constraint rows it concerns.
struct finding {
  severity level = severity::info;
  std::string code;
  std::string message;
  std::vector<Index> rows;          ///< 0-based rows of the Jacobian the user passed
  std::vector<std::string> labels;  ///< the same rows by label ("row N" without labels)
};

/// Constraint rows as a person reads them: by the user's label when there is one.
class row_names {
 public:
  row_names() = default;
  explicit row_names(std::vector<std::string> labels) : labels_(std::move(labels)) {}

  std::string operator()(Index row) const {
    if (row >= 0 && static_cast<std::size_t>(row) < labels_.size() && !labels_[row].empty())
      return labels_[row];
    return "row " + std::to_string(row);
  }
  std::vector<std::string> operator()(const std::vector<Index>& rows) const {
    std::vector<std::string> names;
    names.reserve(rows.size());
    for (Index r : rows) names.push_back((*this)(r));
    return names;
  }
  const std::vector<std::string>& labels() const noexcept { return labels_; }

 private:
  std::vector<std::string> labels_;
};

namespace detail {

/// Three significant digits: the figures in messages are for reading, the fields keep all.
inline std::string format_figure(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3g", v);
  return buffer;
}

}  // namespace detail

/// Appends a finding whose rows are named through `names`.
inline void add_finding(std::vector<finding>& findings, severity level, std::string code,
                        std::string message, std::vector<Index> rows, const row_names& names) {
  auto labels = names(rows);
  findings.push_back({level, std::move(code), std::move(message), std::move(rows),
                      std::move(labels)});
}

}  // namespace qualify
