// qualify tests: faults — callbacks that throw, return NaN/Inf or change size, iteration limits,
// files cut short and paths that cannot be read. Each must give a clear report, never a crash.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <memory>
#include <qualify/doctest.hpp>
#include <qualify/qualify.hpp>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "point_file.hpp"
#include "temp_dir.hpp"

using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify::constraint_kind;
using qualify::constraint_type;
using qualify::finding;
using qualify::Index;
using qualify::verdict;

namespace {

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

VectorXd vec(std::initializer_list<double> v) {
  return Eigen::Map<const VectorXd>(v.begin(), Index(v.size()));
}

// Hand-checkable: min x0 + x1 s.t. "disc" x0^2 + x1^2 - 1 <= 0 (convex) and "diagonal"
// x0 - x1 = 0 (affine). At x* = -(1, 1)/sqrt(2) the disc is active and
// (1, 1) + lambda 2 x* = 0 with lambda = 1/sqrt(2); x = 0 is a Slater point (g = -1).
qualify::callback_model disc_model() {
  qualify::callback_model m;
  m.variables = 2;
  m.types = {constraint_type::inequality, constraint_type::equality};
  m.kinds = {constraint_kind::convex, constraint_kind::affine};
  m.labels = {"disc", "diagonal"};
  m.convex_model = true;
  m.objective = [](const VectorXd& x) { return x.sum(); };
  m.objective_gradient = [](const VectorXd&) { return VectorXd(VectorXd::Ones(2)); };
  m.objective_hessian = [](const VectorXd&) { return MatrixXd(MatrixXd::Zero(2, 2)); };
  m.constraint_values = [](const VectorXd& x) { return vec({x.squaredNorm() - 1, x(0) - x(1)}); };
  m.constraint_jacobian = [](const VectorXd& x) {
    MatrixXd j(2, 2);
    j << 2 * x(0), 2 * x(1), 1, -1;
    return j;
  };
  m.constraint_hessian = [](const VectorXd&, Index i) {
    return MatrixXd(i == 0 ? MatrixXd(2 * MatrixXd::Identity(2, 2)) : MatrixXd::Zero(2, 2));
  };
  return m;
}

const VectorXd x_star = -VectorXd::Ones(2) / std::sqrt(2.0);

enum class fault { throws_std, throws_other, nan, inf, wrong_size };

const char* name_of(fault f) {
  switch (f) {
    case fault::throws_std:
      return "throws a std::exception";
    case fault::throws_other:
      return "throws an int";
    case fault::nan:
      return "returns NaN";
    case fault::inf:
      return "returns Inf";
    case fault::wrong_size:
      return "returns a wrong size";
  }
  return "";
}

/// Words the report must hold: the callback's name and what it did.
std::vector<std::string> words_of(const std::string& callback, fault f) {
  switch (f) {
    case fault::throws_std:
      return {callback + " threw: sensor offline"};
    case fault::throws_other:
      return {callback + " threw an exception that is not a std::exception"};
    case fault::nan:
      return {callback + " returned nan"};
    case fault::inf:
      return {callback + " returned inf"};
    case fault::wrong_size:
      return {callback + " returned ", ", expected "};
  }
  return {};
}

/// The finding code evaluate_model documents for each fault.
const char* code_of(fault f) {
  switch (f) {
    case fault::throws_std:
    case fault::throws_other:
      return "callback_failed";
    case fault::nan:
    case fault::inf:
      return "non_finite_entry";
    case fault::wrong_size:
      return "callback_size";
  }
  return "";
}

std::vector<fault> all_faults() {
  std::vector<fault> out;
#if defined(__cpp_exceptions)
  out = {fault::throws_std, fault::throws_other};
#endif
  for (fault f : {fault::nan, fault::inf, fault::wrong_size}) out.push_back(f);
  return out;
}

void spoil(double& v, fault f) {
  v = f == fault::inf ? std::numeric_limits<double>::infinity()
                      : std::numeric_limits<double>::quiet_NaN();
}
void spoil(VectorXd& v, fault f) {
  if (f == fault::wrong_size) {
    v.conservativeResize(v.size() + 1);
    v(v.size() - 1) = 0;
  } else {
    spoil(v(v.size() - 1), f);
  }
}
void spoil(MatrixXd& a, fault f) {
  if (f == fault::wrong_size)
    a.conservativeResize(a.rows() + 1, a.cols());
  else
    spoil(a(a.rows() - 1, a.cols() - 1), f);
  if (f == fault::wrong_size) a.row(a.rows() - 1).setZero();
}

/// `good` for its first `good_calls` calls, then the fault on every call.
template <class R, class... A>
std::function<R(A...)> faulty(std::function<R(A...)> good, fault f, int good_calls) {
  auto calls = std::make_shared<int>(0);
  return [good, f, good_calls, calls](A... a) -> R {
    R r = good(a...);
    if ((*calls)++ < good_calls) return r;
#if defined(__cpp_exceptions)
    if (f == fault::throws_std) throw std::runtime_error("sensor offline");
    if (f == fault::throws_other) throw 7;
#endif
    spoil(r, f);
    return r;
  };
}

/// disc_model with `callback` made faulty after `good_calls` calls; false when the callback
/// cannot have the fault (a scalar has no size).
bool make_faulty(qualify::callback_model& m, const std::string& callback, fault f, int good_calls) {
  if (callback == "objective") {
    if (f == fault::wrong_size) return false;
    m.objective = faulty(m.objective, f, good_calls);
  } else if (callback == "objective_gradient") {
    m.objective_gradient = faulty(m.objective_gradient, f, good_calls);
  } else if (callback == "objective_hessian") {
    m.objective_hessian = faulty(m.objective_hessian, f, good_calls);
  } else if (callback == "constraint_values") {
    m.constraint_values = faulty(m.constraint_values, f, good_calls);
  } else if (callback == "constraint_jacobian") {
    m.constraint_jacobian = faulty(m.constraint_jacobian, f, good_calls);
  } else if (callback == "constraint_hessian") {
    m.constraint_hessian = faulty(m.constraint_hessian, f, good_calls);
  }
  return true;
}

/// What a check said, whichever check it was.
struct outcome {
  verdict result = verdict::not_checked;
  std::string message, full;
  std::vector<finding> findings;
  bool has(const std::string& code) const {
    for (const auto& f : findings)
      if (f.code == code) return true;
    return false;
  }
  /// The message of the first finding with `code` ("" when none).
  std::string finding_text(const std::string& code) const {
    for (const auto& f : findings)
      if (f.code == code) return f.message;
    return {};
  }
};

template <class Report>
outcome outcome_of(const Report& r) {
  return {r.result, r.message, fmt::format("{:f}", r), r.findings};
}

/// Refused: invalid_input with the fault's code, the callback and its fault in the message.
void check_refused(const outcome& o, const std::string& callback, fault f) {
  CHECK(o.result == verdict::invalid_input);
  CHECK(o.has(code_of(f)));
  for (const auto& w : words_of(callback, f)) CHECK(contains(o.message, w));
}

struct entry_point {
  const char* name;
  std::vector<std::string> callbacks;  ///< those it calls at x itself
  std::function<outcome(const qualify::callback_model&)> run;
};

std::vector<entry_point> entry_points() {
  std::vector<entry_point> out;
  out.push_back({"evaluate_model",
                 {"constraint_values", "constraint_jacobian", "objective_gradient",
                  "objective_hessian", "constraint_hessian"},
                 [](const qualify::callback_model& m) {
                   const auto e = qualify::evaluate_model(m, x_star, {true, true});
                   outcome o;
                   o.result = e.ok() ? verdict::holds : verdict::invalid_input;
                   o.message = o.full = e.error;
                   if (!e.ok())
                     o.findings.push_back({qualify::severity::error, e.code, e.error, {}, {}});
                   return o;
                 }});
  out.push_back(
      {"check_kkt",
       {"constraint_values", "constraint_jacobian", "objective_gradient", "objective_hessian",
        "constraint_hessian"},
       [](const qualify::callback_model& m) { return outcome_of(qualify::check_kkt(m, x_star)); }});
  out.push_back({"check_derivatives",
                 {"objective", "constraint_values", "constraint_jacobian", "objective_gradient",
                  "objective_hessian", "constraint_hessian"},
                 [](const qualify::callback_model& m) {
                   return outcome_of(qualify::check_derivatives(m, x_star));
                 }});
  out.push_back(
      {"check_slater",
       {"constraint_values", "constraint_jacobian", "constraint_hessian"},
       [](const qualify::callback_model& m) { return outcome_of(qualify::check_slater(m)); }});
  return out;
}

}  // namespace

TEST_CASE("the fault-free model passes every entry point (the baseline of the faults below)") {
  const auto m = disc_model();
  const auto kkt = qualify::check_kkt(m, x_star);
  QUALIFY_CHECK_HOLDS(kkt);
  CHECK(kkt.multipliers(0) == doctest::Approx(1 / std::sqrt(2.0)));  // hand-checked, above
  QUALIFY_CHECK_HOLDS(qualify::check_derivatives(m, x_star));
  QUALIFY_CHECK_HOLDS(qualify::check_slater(m));
  CHECK(qualify::evaluate_model(m, x_star, {true, true}).ok());
}

TEST_CASE("a callback that fails at x: every entry point refuses, naming the callback") {
  for (const auto& ep : entry_points())
    for (const auto& callback : ep.callbacks)
      for (fault f : all_faults()) {
        auto m = disc_model();
        if (!make_faulty(m, callback, f, 0)) continue;
        const outcome o = ep.run(m);
        CAPTURE(std::string(ep.name));
        CAPTURE(callback);
        CAPTURE(std::string(name_of(f)));
        CAPTURE(o.full);
        check_refused(o, callback, f);
      }
}

namespace {

/// The report names the callback and its fault, in the message or in a finding.
bool mentions(const outcome& o, const std::string& callback, fault f) {
  std::vector<std::string> texts{o.message};
  for (const auto& fi : o.findings) texts.push_back(fi.message);
  for (const auto& text : texts) {
    bool all = true;
    for (const auto& w : words_of(callback, f)) all = all && contains(text, w);
    if (all) return true;
  }
  return false;
}

/// How often `callback` is called when disc_model runs through `run` without faults.
int calls_of(const std::string& callback,
             const std::function<void(const qualify::callback_model&)>& run) {
  auto m = disc_model();
  auto count = std::make_shared<int>(0);
  const auto counted = [count](auto f) {
    return [f, count](const auto&... a) {
      ++*count;
      return f(a...);
    };
  };
  if (callback == "objective") m.objective = counted(m.objective);
  if (callback == "objective_gradient") m.objective_gradient = counted(m.objective_gradient);
  if (callback == "constraint_values") m.constraint_values = counted(m.constraint_values);
  if (callback == "constraint_jacobian") m.constraint_jacobian = counted(m.constraint_jacobian);
  if (callback == "constraint_hessian") m.constraint_hessian = counted(m.constraint_hessian);
  run(m);
  return *count;
}

}  // namespace

TEST_CASE("evaluate_model: a callback fine at its first call and wrong at the next") {
  for (const std::string callback :
       {"constraint_values", "constraint_jacobian", "objective_gradient", "objective_hessian",
        "constraint_hessian"})
    for (fault f : all_faults()) {
      auto m = disc_model();
      make_faulty(m, callback, f, callback == "constraint_hessian" ? 2 : 1);  // one per row
      CAPTURE(callback);
      CAPTURE(std::string(name_of(f)));
      CHECK(qualify::evaluate_model(m, x_star, {true, true}).ok());
      const auto e = qualify::evaluate_model(m, x_star, {true, true});
      CHECK(e.code == code_of(f));
      for (const auto& w : words_of(callback, f)) CHECK(contains(e.error, w));
    }
}

TEST_CASE("check_kkt: a callback that fails away from x, or changes its size there") {
  // Without Hessian callbacks the Lagrangian's Hessian comes from gradients at x +- h e_j.
  // A throw, NaN or Inf there is a domain edge: first order still decides, second order is
  // not checked and says why. A different size means a broken model: invalid_input.
  for (const std::string callback :
       {"constraint_values", "constraint_jacobian", "objective_gradient"})
    for (fault f : all_faults()) {
      auto m = disc_model();
      m.objective_hessian = nullptr;
      m.constraint_hessian = nullptr;
      make_faulty(m, callback, f, 1);  // fine at x, wrong at x +- h e_j
      const auto r = qualify::check_kkt(m, x_star);
      const outcome o = outcome_of(r);
      CAPTURE(callback);
      CAPTURE(std::string(name_of(f)));
      CAPTURE(o.full);
      if (f == fault::wrong_size) {
        check_refused(o, callback, f);
      } else {
        CHECK(r.result == verdict::holds);
        CHECK(r.second_order.result == qualify::second_order_result::not_checked);
        CHECK(contains(o.finding_text("difference_evaluation_failed"),
                       words_of(callback, f).front()));
      }
    }
}

TEST_CASE("check_derivatives: a callback that fails or changes its size at displaced points") {
  // At x: evaluate_model calls constraint_values, constraint_jacobian and objective_gradient
  // once; then each differenced callback once more (objective for the first time). Every
  // call after those is at a displaced point. There every fault, a wrong size included, is
  // a failed evaluation (as derivative_check_test pins down): smaller steps are tried, the
  // entries stay not evaluated and a finding quotes the callback.
  for (const std::string callback :
       {"objective", "constraint_values", "constraint_jacobian", "objective_gradient"})
    for (fault f : all_faults()) {
      auto m = disc_model();
      if (!make_faulty(m, callback, f, callback == "objective" ? 1 : 2)) continue;
      const auto r = qualify::check_derivatives(m, x_star);
      const outcome o = outcome_of(r);
      CAPTURE(callback);
      CAPTURE(std::string(name_of(f)));
      CAPTURE(o.full);
      // No difference can be taken: the entries are not evaluated, never called agreeing.
      CHECK(r.result == verdict::undecided);
      CHECK(r.not_evaluated > 0);
      for (const auto& w : words_of(callback, f))
        CHECK(contains(o.finding_text("displaced_point_failed"), w));
    }
}

TEST_CASE("check_slater: a callback that goes wrong during the phase one") {
  // From (2, 2) the disc is violated, so the phase one has to move. Faults from the second
  // call on, and from half-way through a fault-free run: never "holds" on a point the
  // callbacks did not confirm, and the report names the callback; a wrong size is invalid.
  qualify::slater_options o;
  o.start = vec({2, 2});
  for (const std::string callback :
       {"constraint_values", "constraint_jacobian", "constraint_hessian"}) {
    const int total =
        calls_of(callback, [&](const qualify::callback_model& m) { qualify::check_slater(m, o); });
    CAPTURE(callback);
    REQUIRE(total > 4);
    for (int good : {1, total / 2})
      for (fault f : all_faults()) {
        auto m = disc_model();
        make_faulty(m, callback, f, good);
        const auto r = qualify::check_slater(m, o);
        const outcome out = outcome_of(r);
        CAPTURE(good);
        CAPTURE(std::string(name_of(f)));
        CAPTURE(out.full);
        CHECK(r.result != verdict::holds);
        CHECK(mentions(out, callback, f));
        if (f == fault::wrong_size) {
          CHECK(r.result == verdict::invalid_input);
          CHECK(out.has("callback_size"));
        }
      }
  }
}

// ---- iteration limits ------------------------------------------------------------------------

TEST_CASE("an LP stopped by its iteration limit says so, with the residuals of its last iterate") {
  // Hand-checkable: max x0 + x1 s.t. x0 + 2 x1 <= 4, 3 x0 + x1 <= 6, x >= 0 has its optimum at
  // the vertex (8/5, 6/5); no singleton row, so presolve leaves it to the iterations.
  MatrixXd A(2, 2);
  A << 1, 2, 3, 1;
  const double inf = std::numeric_limits<double>::infinity();
  const VectorXd c = vec({-1, -1}), rl = vec({-inf, -inf}), ru = vec({4, 6}), cl = vec({0, 0}),
                 cu = vec({inf, inf});
  const auto solved = qualify::solve_lp(A, c, rl, ru, cl, cu);
  REQUIRE(solved.status == qualify::lp_status::optimal);
  CHECK(solved.x(0) == doctest::Approx(1.6));
  qualify::lp_options few;
  few.max_iterations = 1;
  const auto r = qualify::solve_lp(A, c, rl, ru, cl, cu, few);
  CAPTURE(r.message);
  CHECK(r.status == qualify::lp_status::iteration_limit);
  CHECK(r.iterations == 1);
  CHECK(contains(r.message, "iteration limit (1, lp_options::max_iterations)"));
  CHECK(contains(r.message, "primal " + qualify::detail::format_figure(r.primal_residual)));
  CHECK(contains(r.message, "dual " + qualify::detail::format_figure(r.dual_residual)));
  CHECK(contains(r.message, "gap " + qualify::detail::format_figure(r.gap)));
  // Stopped early: some residual is still above its tolerance, or the test would have passed.
  CHECK((r.primal_residual > few.primal_tolerance || r.dual_residual > few.dual_tolerance ||
         r.gap > few.gap_tolerance));
}

TEST_CASE(
    "MFCQ and the affine Slater check: an LP at its limit decides only what checks directly") {
  // The three lines through the origin -x0 <= 0, -x1 <= 0, -x0 - x1 <= 0: MFCQ holds with
  // d = (1, 1) (hand-checked). The LP's last iterate after one iteration already gives a
  // direction, and MFCQ holds only because that direction is checked directly.
  MatrixXd fan(3, 2);
  fan << -1, 0, 0, -1, -1, -1;
  QUALIFY_CHECK_HOLDS(qualify::check_mfcq(fan));
  qualify::mfcq_options o;
  o.lp.max_iterations = 1;
  auto r = qualify::check_mfcq(fan, o);
  QUALIFY_CHECK_HOLDS(r);
  CHECK(r.lp == qualify::lp_status::iteration_limit);
  CHECK(r.direction_margin > 0);  // the direction itself, not the LP's value
  CHECK(
      contains(outcome_of(r).finding_text("lp_not_solved"),
               "iteration limit (1, lp_options::max_iterations) was reached; relative residuals"));
  // The Kuhn-Tucker cusp's gradients (0, 1) and (0, -1) (Kuhn and Tucker, 1951): MFCQ fails
  // (hand-checked). Stopped early, the LP must not turn that into "holds".
  MatrixXd cusp(2, 2);
  cusp << 0, 1, 0, -1;
  QUALIFY_CHECK_FAILS(qualify::check_mfcq(cusp));
  r = qualify::check_mfcq(cusp, o);
  CAPTURE(fmt::format("{:f}", r));
  CHECK(r.result != verdict::holds);
  CHECK(r.result != verdict::invalid_input);

  // 0 <= x0 <= 1 as a row, x free: strictly feasible at x0 = 1/2 (hand-checked).
  const MatrixXd row = MatrixXd::Ones(1, 1);
  const double inf = std::numeric_limits<double>::infinity();
  const VectorXd zero = vec({0}), one = vec({1}), free_lower = vec({-inf}), free_upper = vec({inf});
  QUALIFY_CHECK_HOLDS(qualify::check_affine_slater(row, zero, one, free_lower, free_upper));
  qualify::affine_slater_options a;
  a.lp.max_iterations = 1;
  const auto s = qualify::check_affine_slater(row, zero, one, free_lower, free_upper, a);
  QUALIFY_CHECK_VERDICT(s, verdict::undecided);
  CHECK(contains(outcome_of(s).finding_text("lp_not_solved"), "iteration limit (1"));
}

TEST_CASE("the phase one stopped by its Newton step limit: undecided, with the bounds on s*") {
  // disc_model from (2, 2), where the disc is violated (g = 7): one Newton step cannot reach
  // a Slater point (the first step is damped), so the answer rests on the bounds.
  qualify::slater_options o;
  o.start = vec({2, 2});
  QUALIFY_CHECK_HOLDS(qualify::check_slater(disc_model(), o));
  o.max_newton_steps = 1;
  const auto r = qualify::check_slater(disc_model(), o);
  QUALIFY_CHECK_VERDICT(r, verdict::undecided);
  CHECK(r.newton_steps == 1);
  CHECK(contains(r.message, "the phase one used its 1 Newton steps"));
  CHECK(contains(r.message, "s* in ["));
  CHECK(outcome_of(r).has("phase_one_incomplete"));
}

// ---- files cut short and paths that cannot be read ---------------------------------------

namespace {

/// Writes `text` to `name` in `dir` and takes every permission away. False (with a "skipped"
/// message) when the file can still be read: root, or a capability, ignores the mode bits.
bool write_unreadable(const qualify_test::temp_dir& dir, const std::string& name,
                      const std::string& text) {
  const auto file = dir.write(name, text);
  std::filesystem::permissions(file, std::filesystem::perms::none);
  if (!std::ifstream(file)) return true;
  MESSAGE("skipped: '", name,
          "' is still readable after chmod 000 (running as root?); the "
          "no-permission case is not checked here");
  return false;
}

const std::string mtx_head = "%%MatrixMarket matrix coordinate real general\n2 2 2\n1 1 1\n";
const std::string mps_text =
    "NAME CUT\nROWS\n N COST\n L LIM\nCOLUMNS\n X1 COST 1 LIM 1\nRHS\n RHS LIM 4\nENDATA\n";

}  // namespace

TEST_CASE("Matrix Market: a file cut inside an entry, and paths that cannot be read") {
  using qualify::read_error;
  qualify_test::temp_dir dir("qualify_fault_");
  // Cut inside the value of the last entry: "1.5e" is not a number, on line 4.
  auto r = qualify::read_matrix_market(dir.write("cut.mtx", mtx_head + "2 2 1.5e"));
  CHECK(r.error == read_error::malformed);
  CHECK(r.line == std::optional<std::size_t>(4));
  CHECK(contains(r.message, "'1.5e'"));
  // Cut between the column and the value: the entry is incomplete.
  r = qualify::read_matrix_market(dir.write("short.mtx", mtx_head + "2 2"));
  CHECK(r.error == read_error::malformed);
  CHECK(r.line == std::optional<std::size_t>(4));
  // Cut inside the header line.
  r = qualify::read_matrix_market(dir.write("head.mtx", "%%MatrixMarket matrix coord"));
  CHECK(r.error == read_error::malformed);
  CHECK(r.line == std::optional<std::size_t>(1));
  // The whole last line without its newline is a complete file.
  CHECK(qualify::read_matrix_market(dir.write("no_newline.mtx", mtx_head + "2 2 1")).ok);

  r = qualify::read_matrix_market(dir.path / "missing.mtx");
  CHECK(r.error == read_error::cannot_open);
  CHECK(contains(r.message, "missing.mtx': No such file or directory"));
  r = qualify::read_matrix_market(dir.path);
  CHECK(r.error == read_error::cannot_open);
  CHECK(contains(r.message, "it is a directory"));
  if (write_unreadable(dir, "locked.mtx", mtx_head + "2 2 1\n")) {
    r = qualify::read_matrix_market(dir.path / "locked.mtx");
    CHECK(r.error == read_error::cannot_open);
    CHECK(contains(r.message, "locked.mtx': Permission denied"));
  }
}

TEST_CASE("MPS: a file cut inside a line, and paths that cannot be read") {
  qualify_test::temp_dir dir("qualify_fault_");
  REQUIRE(qualify::read_mps_file(dir.write("whole.mps", mps_text).string()).ok());
  // Cut inside the COLUMNS line after the row name: a row without its value, on line 6.
  auto m = qualify::read_mps_file(dir.write("cut.mps", mps_text.substr(0, 49)).string());
  CAPTURE(m.error);
  CHECK_FALSE(m.ok());
  CHECK(m.error_line == 6);
  CHECK(contains(m.error, "line 6: "));
  // Cut inside the ENDATA line: "END" on line 9 is no section.
  m = qualify::read_mps_file(
      dir.write("end.mps", mps_text.substr(0, mps_text.size() - 4)).string());
  CHECK(m.error_line == 9);
  CHECK(contains(m.error, "line 9: unknown section 'END'"));

  m = qualify::read_mps_file((dir.path / "missing.mps").string());
  CHECK(m.error_line == 0);
  CHECK(contains(m.error, "cannot open '"));
  CHECK(contains(m.error, "missing.mps': No such file or directory"));
  // Regression: a directory opened as a stream and failed on the first read, reported as
  // "line 0: the stream failed while reading".
  m = qualify::read_mps_file(dir.path.string());
  CAPTURE(m.error);
  CHECK(m.error_line == 0);
  CHECK(contains(m.error, "cannot open '"));
  CHECK(contains(m.error, "': it is a directory"));
  if (write_unreadable(dir, "locked.mps", mps_text)) {
    m = qualify::read_mps_file((dir.path / "locked.mps").string());
    CHECK(contains(m.error, "locked.mps': Permission denied"));
  }
}

TEST_CASE("POINT.json: a file cut inside a value, and paths that cannot be read") {
  qualify_test::temp_dir dir("qualify_fault_");
  const std::string text =
      "{ \"x\": [1, 2],\n  \"objective\": { \"gradient\": [1.5, 1] }, \"constraints\": [] }\n";
  REQUIRE(qualify_cli::read_point_file(dir.write("whole.json", text).string()));
  // Cut inside the number 1.5 of the gradient ("[1."), on line 2.
  auto r = qualify_cli::read_point_file(dir.write("cut.json", text.substr(0, 47)).string());
  REQUIRE_FALSE(r);
  CAPTURE(r.error().message);
  CHECK(r.error().code == qualify_cli::exit_code::data);
  CHECK(r.error().line == std::optional<std::size_t>(2));
  CHECK(contains(r.error().message, "cut.json': line 2, column "));

  r = qualify_cli::read_point_file(dir.path.string());
  REQUIRE_FALSE(r);
  CHECK(r.error().code == qualify_cli::exit_code::no_input);
  if (write_unreadable(dir, "locked.json", text)) {
    r = qualify_cli::read_point_file((dir.path / "locked.json").string());
    REQUIRE_FALSE(r);
    CHECK(r.error().code == qualify_cli::exit_code::no_input);
    CHECK(contains(r.error().message, "locked.json': Permission denied"));
  }
}
