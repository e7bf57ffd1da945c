// qualify: models of minimise f(x) s.t. g_i(x) <= 0, h_j(x) = 0 — evaluated at one point
// (model_at_point, the input of the point checks) or given by callbacks (callback_model).
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <Eigen/SparseCore>
#include <cmath>
#include <exception>
#include <functional>
#include <optional>
#include <qualify/constraints.hpp>
#include <qualify/detail/sparse.hpp>
#include <qualify/detail/config.hpp>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

namespace qualify {

/// f, g_i <= 0 and h_j = 0 at x: values, first derivatives and, where known, second
/// derivatives. Row i of `jacobian` is the gradient of constraint i; `types`, `kinds`,
/// `labels` (may be empty) and `hessians` (empty, or one optional entry per constraint) are
/// indexed the same way. Nothing here is validated on construction: every check validates it
/// and answers `invalid_input` naming the field. `Jacobian` is Eigen::MatrixXd
/// (`model_at_point`) or Eigen::SparseMatrix<double> row- or column-major
/// (`sparse_model_at_point`); the Hessians stay dense n x n either way, since second order is
/// only ever checked on small reduced Hessians (kkt_options::second_order_limit).
template <class Jacobian>
struct basic_model_at_point {
  static_assert(std::is_same_v<Jacobian, Eigen::MatrixXd> ||
                    std::is_same_v<Jacobian, Eigen::SparseMatrix<double, Eigen::ColMajor>> ||
                    std::is_same_v<Jacobian, Eigen::SparseMatrix<double, Eigen::RowMajor>>,
                "the Jacobian of a point is Eigen::MatrixXd or Eigen::SparseMatrix<double>");
  Eigen::VectorXd x;
  Eigen::VectorXd objective_gradient;
  std::optional<Eigen::MatrixXd> objective_hessian;
  Eigen::VectorXd values;
  Jacobian jacobian;
  std::vector<constraint_type> types;
  std::vector<constraint_kind> kinds;
  std::vector<std::string> labels;
  std::vector<std::optional<Eigen::MatrixXd>> hessians;
  /// The modeller's claim that f and every inequality are convex and every equality affine.
  bool convex_model = false;
};

/// A model at one point with a dense Jacobian: the input of the point checks.
using model_at_point = basic_model_at_point<Eigen::MatrixXd>;
/// The same with a sparse Jacobian (for a row-major one: basic_model_at_point<
/// Eigen::SparseMatrix<double, Eigen::RowMajor>>).
using sparse_model_at_point = basic_model_at_point<Eigen::SparseMatrix<double>>;

/// A model given by callbacks, for the checks that evaluate it at points of their own
/// choosing (Slater's phase one, the derivative check, check_kkt at a given x). Constraint i
/// is g_i(x) <= 0 or h_i(x) = 0 as `types[i]` says; the size of `types` is the constraint
/// count. Callbacks are any callables (lambdas, function objects, `std::function`); a user
/// struct is adapted by `make_callback_model`. A callback that throws, returns a vector or
/// matrix of the wrong size, or returns NaN or Inf gives the calling check an
/// `invalid_input` report naming the callback and the entry; it is never propagated.
struct callback_model {
  using vector_fn = std::function<Eigen::VectorXd(const Eigen::VectorXd&)>;
  using matrix_fn = std::function<Eigen::MatrixXd(const Eigen::VectorXd&)>;

  Index variables = 0;
  std::vector<constraint_type> types;
  std::vector<constraint_kind> kinds;  ///< one per constraint
  std::vector<std::string> labels;     ///< empty, or one per constraint
  /// The modeller's claim that f and every inequality are convex and every equality affine.
  bool convex_model = false;

  std::function<double(const Eigen::VectorXd&)> objective;  ///< optional: f(x)
  vector_fn objective_gradient;                             ///< grad f(x); optional for Slater
  matrix_fn objective_hessian;                              ///< optional: n x n
  vector_fn constraint_values;    ///< (g, h)(x) in row order; required when there are constraints
  matrix_fn constraint_jacobian;  ///< rows = gradients; required when there are constraints
  /// Optional: the n x n Hessian of constraint i at x.
  std::function<Eigen::MatrixXd(const Eigen::VectorXd&, Index)> constraint_hessian;

  Index constraints() const noexcept { return Index(types.size()); }
};

/// Empty when `model` is usable, else a message naming the field and the rule it breaks.
inline std::string validate_model(const callback_model& model) {
  const auto m = std::size_t(model.constraints());
  if (model.variables < 1) return "callback_model.variables must be >= 1";
  if (model.kinds.size() != m)
    return "callback_model.kinds has " + std::to_string(model.kinds.size()) + " entries for " +
           std::to_string(m) + " constraints (types)";
  if (!model.labels.empty() && model.labels.size() != m)
    return "callback_model.labels has " + std::to_string(model.labels.size()) + " entries for " +
           std::to_string(m) + " constraints (types)";
  if (m > 0 && !model.constraint_values)
    return "callback_model.constraint_values is required when there are constraints";
  if (m > 0 && !model.constraint_jacobian)
    return "callback_model.constraint_jacobian is required when there are constraints";
  return {};
}

namespace detail {

/// "WHAT entry i is NaN" (vectors) or "WHAT entry (i, j) is +Inf" for the first non-finite
/// entry; empty when every entry is finite.
template <class Derived>
std::string non_finite_entry(const Eigen::MatrixBase<Derived>& a, const std::string& what) {
  const auto at = first_non_finite(a);
  if (!at) return {};
  const std::string where = Derived::ColsAtCompileTime == 1 ? std::to_string(at->row)
                                                            : "(" + std::to_string(at->row) + ", " +
                                                                  std::to_string(at->col) + ")";
  return what + " entry " + where + " is " + describe_non_finite(a(at->row, at->col));
}

}  // namespace detail

/// What makes an input unusable: a finding code (see the README's table) and a message naming
/// the entry; both empty when the input is usable.
struct input_problem {
  std::string code;
  std::string message;
  bool ok() const noexcept { return message.empty(); }
};

/// Checks that a model_at_point is usable: x has n >= 1 entries, the objective gradient n, the
/// objective Hessian (when given) is n x n; `values`, `types` and `kinds` have one entry per
/// row of the m x n `jacobian`; `labels` and `hessians` are empty or have m entries, each
/// Hessian given is n x n; every number is finite. A sparse Jacobian's storage must have
/// offsets that do not decrease and indices in range (`invalid_sparse_structure`); repeated
/// or unordered entries are allowed (the checks sum them per position).
template <class Jacobian>
input_problem validate_point(const basic_model_at_point<Jacobian>& p) {
  const auto n = p.x.size(), m = p.jacobian.rows();
  const auto sizes = [](Index got, Index want, const char* what, const char* of) {
    return std::string(what) + " has " + std::to_string(got) + " entries, expected " +
           std::to_string(want) + " (" + of + ")";
  };
  const auto square = [&](const Eigen::MatrixXd& h, const std::string& what) -> input_problem {
    if (h.rows() == n && h.cols() == n) return {};
    return {"dimension_mismatch", what + " is " + std::to_string(h.rows()) + " x " +
                                      std::to_string(h.cols()) + ", expected " + std::to_string(n) +
                                      " x " + std::to_string(n)};
  };
  if (n == 0) return {"dimension_mismatch", "x has no entries"};
  if (p.objective_gradient.size() != n)
    return {"dimension_mismatch",
            sizes(p.objective_gradient.size(), n, "objective_gradient", "the length of x")};
  if (m > 0 && p.jacobian.cols() != n)
    return {"dimension_mismatch", "jacobian has " + std::to_string(p.jacobian.cols()) +
                                      " columns, expected " + std::to_string(n) +
                                      " (the length of x)"};
  if (p.values.size() != m)
    return {"value_count", sizes(p.values.size(), m, "values", "the rows of jacobian")};
  if (Index(p.types.size()) != m)
    return {"type_count", sizes(Index(p.types.size()), m, "types", "the rows of jacobian")};
  if (Index(p.kinds.size()) != m)
    return {"kind_count", sizes(Index(p.kinds.size()), m, "kinds", "the rows of jacobian")};
  if (!p.labels.empty() && Index(p.labels.size()) != m)
    return {"label_count", sizes(Index(p.labels.size()), m, "labels", "the rows of jacobian")};
  if (!p.hessians.empty() && Index(p.hessians.size()) != m)
    return {"dimension_mismatch",
            sizes(Index(p.hessians.size()), m, "hessians", "the rows of jacobian, or none")};
  const auto finite = [](const auto& a, const std::string& what) -> input_problem {
    std::string message = detail::non_finite_entry(a, what);
    if (message.empty()) return {};
    return {"non_finite_entry", std::move(message)};
  };
  if (auto bad = finite(p.x, "x"); !bad.ok()) return bad;
  if (auto bad = finite(p.objective_gradient, "objective_gradient"); !bad.ok()) return bad;
  if (auto bad = finite(p.values, "values"); !bad.ok()) return bad;
  if constexpr (std::is_same_v<Jacobian, Eigen::MatrixXd>) {
    if (auto bad = finite(p.jacobian, "jacobian"); !bad.ok()) return bad;
  } else {
    const detail::sparse_storage storage = detail::scan_sparse_storage(p.jacobian, "jacobian");
    if (storage.error) return {"invalid_sparse_structure", *storage.error};
    if (auto bad = detail::sparse_non_finite_message(p.jacobian, "jacobian"))
      return {"non_finite_entry", *bad};
  }
  const auto hessian = [&](const Eigen::MatrixXd& h, const std::string& what) {
    input_problem bad = square(h, what);
    return bad.ok() ? finite(h, what) : bad;
  };
  if (p.objective_hessian)
    if (auto bad = hessian(*p.objective_hessian, "objective_hessian"); !bad.ok()) return bad;
  for (std::size_t i = 0; i < p.hessians.size(); ++i)
    if (p.hessians[i])
      if (auto bad = hessian(*p.hessians[i], "hessians[" + std::to_string(i) + "]"); !bad.ok())
        return bad;
  return {};
}

/// What one evaluation of a callback model gave: `point` when `error` is empty, else the
/// finding code (`callback_failed`, `callback_size`, `non_finite_entry`) and a message naming
/// the callback and the entry.
struct model_evaluation {
  model_at_point point;
  std::string code;
  std::string error;
  bool ok() const noexcept { return error.empty(); }
};

/// Which parts `evaluate_model` asks for; values and the Jacobian always.
struct evaluation_request {
  bool objective_gradient = true;
  bool hessians = false;  ///< those the model provides
};

namespace detail {

/// Runs a callback; a thrown exception becomes its message (callbacks are user code, and the
/// checks never let their exceptions escape). Without exceptions (QUALIFY_HAS_EXCEPTIONS 0) a
/// callback cannot throw, so it is called directly; its NaN, Inf and sizes are still checked.
template <class Fn>
bool run_callback(const char* name, Fn&& fn, std::string& error) {
#if QUALIFY_HAS_EXCEPTIONS
  try {
    fn();
    return true;
  } catch (const std::exception& e) {
    error = std::string(name) + " threw: " + e.what();
  } catch (...) {
    error = std::string(name) + " threw an exception that is not a std::exception";
  }
  return false;
#else
  (void)name;
  (void)error;
  fn();
  return true;
#endif
}

/// Empty when `a` is rows x cols with finite entries, else the message.
inline std::string check_callback_result(const char* name, const Eigen::MatrixXd& a, Index rows,
                                         Index cols, const row_names& names, bool rows_are_named,
                                         std::string& code) {
  if (a.rows() != rows || a.cols() != cols) {
    code = "callback_size";
    return std::string(name) + " returned " + std::to_string(a.rows()) + " x " +
           std::to_string(a.cols()) + ", expected " + std::to_string(rows) + " x " +
           std::to_string(cols);
  }
  for (Index j = 0; j < a.cols(); ++j)
    for (Index i = 0; i < a.rows(); ++i)
      if (!std::isfinite(a(i, j))) {
        code = "non_finite_entry";
        std::string where = rows_are_named ? names(i) : "row " + std::to_string(i);
        if (cols > 1) where += ", variable " + std::to_string(j);
        return std::string(name) + " returned " + format_figure(a(i, j)) + " at " + where;
      }
  return {};
}

}  // namespace detail

/// Evaluates `model` at `x` into a model_at_point, checking every callback's answer. The
/// caller has validated the model (validate_model) and the size of x.
inline model_evaluation evaluate_model(const callback_model& model, const Eigen::VectorXd& x,
                                       const evaluation_request& request = {}) {
  model_evaluation out;
  model_at_point& p = out.point;
  const Index n = model.variables, m = model.constraints();
  const row_names names(model.labels);
  p.x = x;
  p.types = model.types;
  p.kinds = model.kinds;
  p.labels = model.labels;
  p.convex_model = model.convex_model;
  const auto fail = [&](std::string code, std::string message) {
    out.code = std::move(code);
    out.error = std::move(message);
    return out;
  };
  const auto checked = [&](const char* name, const Eigen::MatrixXd& a, Index rows, Index cols,
                           bool rows_are_named) {
    std::string code;
    std::string message =
        detail::check_callback_result(name, a, rows, cols, names, rows_are_named, code);
    if (!message.empty()) {
      out.code = std::move(code);
      out.error = std::move(message);
    }
    return out.error.empty();
  };
  std::string error;
  if (m > 0) {
    Eigen::MatrixXd values;
    if (!detail::run_callback(
            "constraint_values", [&] { values = model.constraint_values(x); }, error))
      return fail("callback_failed", error);
    if (!checked("constraint_values", values, m, 1, true)) return out;
    p.values = values.col(0);
    if (!detail::run_callback(
            "constraint_jacobian", [&] { p.jacobian = model.constraint_jacobian(x); }, error))
      return fail("callback_failed", error);
    if (!checked("constraint_jacobian", p.jacobian, m, n, true)) return out;
  } else {
    p.values.resize(0);
    p.jacobian.resize(0, n);
  }
  if (request.objective_gradient) {
    if (!model.objective_gradient)
      return fail("missing_callback", "callback_model.objective_gradient is required here");
    Eigen::MatrixXd gradient;
    if (!detail::run_callback(
            "objective_gradient", [&] { gradient = model.objective_gradient(x); }, error))
      return fail("callback_failed", error);
    if (!checked("objective_gradient", gradient, n, 1, false)) return out;
    p.objective_gradient = gradient.col(0);
  }
  if (request.hessians) {
    if (model.objective_hessian) {
      Eigen::MatrixXd h;
      if (!detail::run_callback(
              "objective_hessian", [&] { h = model.objective_hessian(x); }, error))
        return fail("callback_failed", error);
      if (!checked("objective_hessian", h, n, n, false)) return out;
      p.objective_hessian = std::move(h);
    }
    if (model.constraint_hessian) {
      p.hessians.resize(std::size_t(m));
      for (Index i = 0; i < m; ++i) {
        Eigen::MatrixXd h;
        if (!detail::run_callback(
                "constraint_hessian", [&] { h = model.constraint_hessian(x, i); }, error))
          return fail("callback_failed", error + " (for " + names(i) + ")");
        if (!checked("constraint_hessian", h, n, n, false)) {
          out.error += " (for " + names(i) + ")";
          return out;
        }
        p.hessians[std::size_t(i)] = std::move(h);
      }
    }
  }
  return out;
}

namespace detail {

template <class T, class = void>
struct has_objective : std::false_type {};
template <class T>
struct has_objective<T, std::void_t<decltype(std::declval<const T&>().objective(
                            std::declval<const Eigen::VectorXd&>()))>> : std::true_type {};
template <class T, class = void>
struct has_objective_gradient : std::false_type {};
template <class T>
struct has_objective_gradient<T, std::void_t<decltype(std::declval<const T&>().objective_gradient(
                                     std::declval<const Eigen::VectorXd&>()))>> : std::true_type {};
template <class T, class = void>
struct has_objective_hessian : std::false_type {};
template <class T>
struct has_objective_hessian<T, std::void_t<decltype(std::declval<const T&>().objective_hessian(
                                    std::declval<const Eigen::VectorXd&>()))>> : std::true_type {};
template <class T, class = void>
struct has_constraint_hessian : std::false_type {};
template <class T>
struct has_constraint_hessian<T, std::void_t<decltype(std::declval<const T&>().constraint_hessian(
                                     std::declval<const Eigen::VectorXd&>(), Index{}))>>
    : std::true_type {};

}  // namespace detail

/// Adapts a user struct to a callback_model. `problem` must outlive the result (it is held by
/// reference) and provide `variables()`, `types()`, `kinds()`, `constraint_values(x)` and
/// `constraint_jacobian(x)` as const members; `objective(x)`, `objective_gradient(x)`,
/// `objective_hessian(x)` and `constraint_hessian(x, i)` are used when the struct has them.
template <class Problem>
callback_model make_callback_model(const Problem& problem, std::vector<std::string> labels = {},
                                   bool convex_model = false) {
  callback_model model;
  model.variables = Index(problem.variables());
  model.types = problem.types();
  model.kinds = problem.kinds();
  model.labels = std::move(labels);
  model.convex_model = convex_model;
  const Problem* p = &problem;
  model.constraint_values = [p](const Eigen::VectorXd& x) {
    return Eigen::VectorXd(p->constraint_values(x));
  };
  model.constraint_jacobian = [p](const Eigen::VectorXd& x) {
    return Eigen::MatrixXd(p->constraint_jacobian(x));
  };
  if constexpr (detail::has_objective<Problem>::value)
    model.objective = [p](const Eigen::VectorXd& x) { return double(p->objective(x)); };
  if constexpr (detail::has_objective_gradient<Problem>::value)
    model.objective_gradient = [p](const Eigen::VectorXd& x) {
      return Eigen::VectorXd(p->objective_gradient(x));
    };
  if constexpr (detail::has_objective_hessian<Problem>::value)
    model.objective_hessian = [p](const Eigen::VectorXd& x) {
      return Eigen::MatrixXd(p->objective_hessian(x));
    };
  if constexpr (detail::has_constraint_hessian<Problem>::value)
    model.constraint_hessian = [p](const Eigen::VectorXd& x, Index i) {
      return Eigen::MatrixXd(p->constraint_hessian(x, i));
    };
  return model;
}

}  // namespace qualify
