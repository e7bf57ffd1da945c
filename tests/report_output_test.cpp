// qualify tests: the brief and full text forms, the JSON form, and the doctest helpers.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>
#include <qualify/doctest.hpp>
#include <qualify/json.hpp>

#include <cctype>
#include <set>
#include <string_view>

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

/// A strict JSON syntax check (RFC 8259), collecting the keys of the outermost object.
class json_checker {
 public:
  explicit json_checker(std::string_view text) : s_(text) {}
  bool valid() {
    skip();
    if (!value(0)) return false;
    skip();
    return i_ == s_.size();
  }
  std::set<std::string> top_keys;

 private:
  bool value(int depth) {
    skip();
    if (i_ >= s_.size()) return false;
    const char c = s_[i_];
    if (c == '{') return object(depth);
    if (c == '[') return array(depth);
    if (c == '"') return string(nullptr);
    if (c == '-' || std::isdigit(static_cast<unsigned char>(c))) return number();
    for (std::string_view word : {"true", "false", "null"})
      if (s_.substr(i_, word.size()) == word) return (i_ += word.size(), true);
    return false;
  }
  bool object(int depth) {
    ++i_;
    skip();
    if (peek('}')) return ++i_, true;
    for (;;) {
      skip();
      std::string k;
      if (!string(&k)) return false;
      if (depth == 0) top_keys.insert(k);
      skip();
      if (!peek(':')) return false;
      ++i_;
      if (!value(depth + 1)) return false;
      skip();
      if (peek('}')) return ++i_, true;
      if (!peek(',')) return false;
      ++i_;
    }
  }
  bool array(int depth) {
    ++i_;
    skip();
    if (peek(']')) return ++i_, true;
    for (;;) {
      if (!value(depth + 1)) return false;
      skip();
      if (peek(']')) return ++i_, true;
      if (!peek(',')) return false;
      ++i_;
    }
  }
  bool string(std::string* out) {
    if (!peek('"')) return false;
    for (++i_; i_ < s_.size(); ++i_) {
      const char c = s_[i_];
      if (c == '"') return ++i_, true;
      if (static_cast<unsigned char>(c) < 0x20) return false;
      if (c == '\\') {
        if (++i_ >= s_.size()) return false;
        if (s_[i_] == 'u') {
          for (int k = 0; k < 4; ++k)
            if (++i_ >= s_.size() || !std::isxdigit(static_cast<unsigned char>(s_[i_]))) return false;
        } else if (std::string_view("\"\\/bfnrt").find(s_[i_]) == std::string_view::npos) {
          return false;
        }
      } else if (out) {
        out->push_back(c);
      }
    }
    return false;
  }
  bool number() {
    const std::size_t start = i_;
    if (peek('-')) ++i_;
    while (i_ < s_.size() && (std::isdigit(static_cast<unsigned char>(s_[i_])) ||
                              std::string_view(".eE+-").find(s_[i_]) != std::string_view::npos))
      ++i_;
    return i_ > start;
  }
  bool peek(char c) const { return i_ < s_.size() && s_[i_] == c; }
  void skip() {
    while (i_ < s_.size() && std::isspace(static_cast<unsigned char>(s_[i_]))) ++i_;
  }
  std::string_view s_;
  std::size_t i_ = 0;
};

licq_report duplicated_pair() {
  MatrixXd j(3, 3);
  j << 1, 0, 0, 0, 1, 0, 1, 0, 0;
  return check_licq(j, {}, {"flow \"in\"", "flow_out", "flow_in_copy"});
}

}  // namespace

TEST_CASE("brief and full forms come from one code path") {
  const auto rep = duplicated_pair();
  const std::string brief = fmt::format("{}", rep);
  const std::string full = fmt::format("{:f}", rep);
  CHECK(brief.find('\n') == std::string::npos);
  CHECK(brief == rep.message + " [2 findings]");
  CHECK(full.rfind(rep.message + "\n", 0) == 0);
  // Golden lines: the pieces a person reads first.
  CHECK(full.find("  rank         2 on unit gradients, 2 on gradients as given\n") != std::string::npos);
  CHECK(full.find("  dependent    flow_in_copy\n") != std::string::npos);
  CHECK(full.find("dependent_row              flow_in_copy = 1*flow \"in\" (relative residual 0)") !=
        std::string::npos);
  CHECK(full.find("duplicate_rows             flow_in_copy is a duplicate of flow \"in\"") !=
        std::string::npos);
  CHECK(fmt::format("{}", verdict::undecided) == "undecided");
  CHECK(fmt::format("{}", licq_report{}) == "check_licq was not called");
}

TEST_CASE("JSON is valid, escapes labels, and carries the documented keys") {
  const auto rep = duplicated_pair();
  const std::string json = to_json(rep);
  json_checker checker(json);
  REQUIRE(checker.valid());
  for (const char* key : {"schema_version", "check", "verdict", "message", "method", "rows", "cols",
                          "rank", "raw_rank", "relative_threshold", "threshold", "deciding_value",
                          "margin", "smallest_singular_value", "independent_rows",
                          "dependent_rows", "dependencies", "zero_rows", "duplicate_rows",
                          "parallel_rows", "opposed_rows", "labels", "findings"})
    CHECK_MESSAGE(checker.top_keys.count(key) == 1, key);
  CHECK(json.find("\"verdict\":\"fails\"") != std::string::npos);
  CHECK(json.find("\"dependent_rows\":[2]") != std::string::npos);
  CHECK(json.find("flow \\\"in\\\"") != std::string::npos);
  // A report with no singular value has an infinite condition number: null, not 'inf'.
  const auto zero = check_licq(MatrixXd::Zero(1, 2));
  CHECK(to_json(zero).find("\"condition_number\":null") != std::string::npos);
  CHECK(json_checker(to_json(zero)).valid());
}

TEST_CASE("JSON of the other reports and of bad input is valid") {
  MatrixXd j = MatrixXd::Identity(2, 2);
  j(0, 0) = std::numeric_limits<double>::quiet_NaN();
  for (const std::string& text :
       {to_json(check_licq(j)), to_json(check_linear_cq({constraint_kind::convex})),
        to_json(check_declared_affine<double>({constraint_kind::affine}, {})),
        to_json(check_qualifications(MatrixXd::Identity(2, 2), VectorXd::Zero(2),
                                     {constraint_type::equality, constraint_type::inequality},
                                     {constraint_kind::affine, constraint_kind::unknown}))}) {
    CAPTURE(text);
    CHECK(json_checker(text).valid());
  }
  // Control characters in labels are escaped.
  MatrixXd one(1, 1);
  one << 0;
  const std::string tricky = to_json(check_licq(one, {}, {std::string("tab\there\x01")}));
  CHECK(json_checker(tricky).valid());
  CHECK(tricky.find("tab\\there\\u0001") != std::string::npos);
}

TEST_CASE("the doctest helpers pass on the expected verdict") {
  QUALIFY_CHECK_HOLDS(check_licq(MatrixXd::Identity(3, 4)));
  QUALIFY_CHECK_FAILS(duplicated_pair());
  QUALIFY_CHECK_VERDICT(check_licq(MatrixXd(1, 0)), verdict::invalid_input);
  // The message a failing helper would print is the full report, rows by label.
  const std::string shown = fmt::format("{:f}", duplicated_pair());
  CHECK(shown.find("flow_in_copy") != std::string::npos);
  CHECK(doctest::StringMaker<verdict>::convert(verdict::holds) == doctest::String("holds"));
}

TEST_CASE("JSON of a derivative check is valid and carries the documented keys") {
  // f = x0^2 x1 with a gradient whose second entry is wrong (x0 instead of x0^2).
  callback_model model;
  model.variables = 2;
  model.objective = [](const VectorXd& x) { return x(0) * x(0) * x(1); };
  model.objective_gradient = [](const VectorXd& x) {
    VectorXd g(2);
    g << 2 * x(0) * x(1), x(0);
    return g;
  };
  VectorXd x(2);
  x << 3, 1;
  const auto rep = check_derivatives(model, x);
  const std::string json = to_json(rep);
  json_checker checker(json);
  REQUIRE(checker.valid());
  const char* keys[] = {"schema_version",
                        "check",
                        "verdict",
                        "message",
                        "variables",
                        "constraints",
                        "relative_step_requested",
                        "relative_step",
                        "relative_tolerance",
                        "scale_floor",
                        "value_precision",
                        "estimate_safety",
                        "step_reductions",
                        "entries",
                        "agreeing",
                        "disagreeing",
                        "undecided",
                        "not_evaluated",
                        "max_bound_ratio",
                        "max_proven_ratio",
                        "evaluations",
                        "parts",
                        "worst",
                        "labels",
                        "findings"};
  for (const char* key : keys) CHECK_MESSAGE(checker.top_keys.count(key) == 1, key);
  CHECK(json.find("\"name\":\"d(objective)/dx[1]\"") != std::string::npos);
  CHECK(json_checker(to_json(check_derivatives(model, VectorXd(3)))).valid());
}
