// qualify command: constraint-qualification checks on files dumped from any optimizer.
// SPDX-License-Identifier: MIT
//
// A subcommand is a command_spec (what it accepts, its --help text), one function
// `int run_NAME(const invocation&)` that returns the exit status, and one line in `commands`.
// Argument parsing, --help, the JSON error object and the exit statuses are shared (cli.hpp);
// reading Jacobians and labels too (inputs.hpp).
#include <fmt/core.h>

#include <cstdio>
#include <exception>
#include <new>
#include <qualify/format.hpp>
#include <qualify/json.hpp>
#include <qualify/kkt.hpp>
#include <qualify/licq.hpp>
#include <qualify/mfcq.hpp>
#include <qualify/lp.hpp>
#include <qualify/mps.hpp>
#include <qualify/slater.hpp>
#include <qualify/sparse_licq.hpp>
#include <qualify/version.hpp>
#include <string>
#include <vector>

#include "cli.hpp"
#include "inputs.hpp"
#include "point_file.hpp"

namespace exit_code = qualify_cli::exit_code;

namespace {

using qualify_cli::invocation;
using qualify_cli::problem;
using qualify_cli::shown_name;

/// Prints a checked report (JSON with --json, else the full text) and maps its verdict to the
/// exit status.
template <class Report>
int print_report(const invocation& in, const Report& report) {
  if (in.json())
    fmt::print("{}\n", qualify::to_json(report));
  else
    fmt::print("{:f}", report);
  return qualify_cli::exit_for(report.result);
}

/// Label k sits on line k (blank lines come only at the end): name the first label without
/// a row, or the last one when rows are left without a label. `of` names the matrices.
problem label_count_problem(const std::string& labels_path, std::size_t n, std::size_t rows,
                            const std::string& of) {
  const std::optional<std::size_t> line = n > rows ? std::optional<std::size_t>(rows + 1)
                                          : n > 0  ? std::optional<std::size_t>(n)
                                                   : std::nullopt;
  return {exit_code::data,
          fmt::format("{}: {}{} label{} for the {} row{} of {}; {}", shown_name(labels_path),
                      line ? fmt::format("line {}: ", *line) : std::string(), n, n == 1 ? "" : "s",
                      rows, rows == 1 ? "" : "s", of,
                      n > rows ? "this label has no row"
                      : n > 0  ? "the labels end here"
                               : "the file has no label"),
          labels_path, line};
}

// ---- licq -----------------------------------------------------------------------------------

const qualify_cli::command_spec licq_spec{
    "licq",
    "are the gradients of the active constraints linearly independent (LICQ)?",
    {"FILE.mtx"},
    {{"--labels", "FILE",
      "one label per line, row by row, to name rows in the report\n"
      "(blank lines at the end are ignored)"},
     {"--tol", "X",
      "relative rank threshold tau, a number in (0, 1): a direction of the\n"
      "row-normalised gradients counts when its singular value exceeds tau\n"
      "(default: max(rows, columns) * machine epsilon)"}},
    "Checks the linear independence constraint qualification at a point: the rows of the\n"
    "Jacobian in FILE.mtx (one row per active constraint: its gradient; one column per\n"
    "variable) must be linearly independent. Rows are normalised first, so a constraint\n"
    "multiplied by a constant gives the same verdict.\n"
    "\n"
    "FILE.mtx is a Matrix Market file (NISTIR 5935): 'coordinate' or 'array', 'real',\n"
    "'integer' or 'pattern', 'general' symmetry; duplicate coordinate entries are summed;\n"
    "'-' reads standard input. A coordinate file is held sparse and checked by the sparse\n"
    "path (SuiteSparse's SPQR when qualify was built with it, else the dense core up to\n"
    "16777216 entries); an array file is held dense: rows x columns may not exceed\n"
    "67108864 entries (512 MiB).\n",
    "Output: the full report on stdout (verdict, rank, threshold, deciding value and margin,\n"
    "independent and dependent rows, findings such as dependent_row, duplicate_rows,\n"
    "opposed_rows, zero_gradient). With --json, one JSON object on one line instead, with\n"
    "the keys schema_version, check, verdict, message, rank, rows, cols, dependent_rows,\n"
    "dependencies, findings and more.\n"};

int run_licq(const invocation& in) {
  const std::string& path = in.operands()[0];
  qualify::licq_options options;
  if (const auto tol = in.value("--tol")) {
    const auto x = qualify_cli::parse_open_unit(*tol);
    if (!x)
      return in.usage_error(
          fmt::format("--tol must be a finite number in (0, 1), got {}", invocation::quote(*tol)));
    options.relative_threshold = *x;
  }
  const auto labels_path = in.value("--labels");
  if (labels_path && *labels_path == "-" && path == "-")
    return in.usage_error("the matrix and the labels cannot both come from standard input");

  // Labels first: a mistake there is found before a long matrix read.
  std::vector<std::string> labels;
  if (labels_path) {
    auto read = qualify_cli::read_labels(*labels_path);
    if (!read) return in.fail(read.error());
    labels = std::move(*read);
  }
  auto jacobian = qualify_cli::read_jacobian(path);
  if (!jacobian) return in.fail(jacobian.error());
  const auto rows = static_cast<std::size_t>(jacobian->rows());
  if (labels_path && labels.size() != rows)
    return in.fail(label_count_problem(*labels_path, labels.size(), rows, shown_name(path)));

  const qualify::licq_report report =
      jacobian->sparse ? qualify::check_licq(*jacobian->sparse, options, std::move(labels))
                       : qualify::check_licq(*jacobian->dense, options, std::move(labels));
  if (report.result == qualify::verdict::invalid_input)
    return in.fail({exit_code::data, shown_name(path) + ": " + report.message, path, std::nullopt});
  return print_report(in, report);
}

// ---- mfcq -----------------------------------------------------------------------------------

const qualify_cli::command_spec mfcq_spec{
    "mfcq",
    "do the active gradients admit a strictly decreasing direction (MFCQ)?",
    {},
    {{"--ineq", "A.mtx",
      "required: the Jacobian of the active inequalities g_i(x) <= 0, one row\n"
      "per constraint (its gradient), one column per variable; 0 rows allowed",
      true},
     {"--eq", "E.mtx", "the Jacobian of the equality constraints (default: none)"},
     {"--labels", "FILE",
      "one label per line: the rows of A.mtx, then the rows of E.mtx\n"
      "(blank lines at the end are ignored)"},
     {"--tol", "X",
      "threshold tau on the margin t*, a number in (0, 1), relative to the\n"
      "gradient norms (default: 1e-7, ten times the LP's accuracy)"}},
    "Checks the Mangasarian-Fromovitz constraint qualification at a point: the equality\n"
    "gradients (rows of E.mtx) are linearly independent and some direction d has E d = 0\n"
    "and A d < 0. Decided on unit gradients by the LP max t s.t. A d + t <= 0, E d = 0,\n"
    "-1 <= d <= 1, t <= 1: MFCQ holds when E has full rank and t* > 0. A holding verdict\n"
    "comes with the direction, checked directly; a failing one with a certificate: lambda\n"
    ">= 0 summing to 1 and mu with A^T lambda + E^T mu = 0 (a positive linear dependence).\n"
    "\n"
    "The files are Matrix Market (NISTIR 5935), as for 'qualify licq'; '-' reads standard\n"
    "input (for one of them). When either file is in coordinate form, both are held\n"
    "sparse and checked by the sparse path; two array files are held dense.\n",
    "Output: the full report on stdout (verdict, t*, the direction's margin, the certificate\n"
    "and the rows it names, the rank of E, LICQ on [A; E] for comparison). With --json, one\n"
    "JSON object on one line instead, with the keys schema_version, check, verdict,\n"
    "message, margin, certificate (kind, ineq_rows, eq_rows, lambda, mu, residual),\n"
    "equality_licq, licq, findings and more.\n"};

int run_mfcq(const invocation& in) {
  const auto ineq_path = in.value("--ineq");  // required: the parser checked it
  const auto eq_path = in.value("--eq");
  const auto labels_path = in.value("--labels");
  qualify::mfcq_options options;
  if (const auto tol = in.value("--tol")) {
    const auto x = qualify_cli::parse_open_unit(*tol);
    if (!x)
      return in.usage_error(
          fmt::format("--tol must be a finite number in (0, 1), got {}", invocation::quote(*tol)));
    options.relative_threshold = *x;
  }
  const int from_stdin = int(*ineq_path == "-") + int(eq_path && *eq_path == "-") +
                         int(labels_path && *labels_path == "-");
  if (from_stdin > 1) return in.usage_error("only one input can come from standard input");

  std::vector<std::string> labels;
  if (labels_path) {
    auto read = qualify_cli::read_labels(*labels_path);
    if (!read) return in.fail(read.error());
    labels = std::move(*read);
  }
  auto ineq = qualify_cli::read_jacobian(*ineq_path);
  if (!ineq) return in.fail(ineq.error());
  qualify_cli::jacobian_input eq;
  eq.dense = Eigen::MatrixXd(0, ineq->cols());
  if (eq_path) {
    auto read = qualify_cli::read_jacobian(*eq_path);
    if (!read) return in.fail(read.error());
    eq = std::move(*read);
  }
  const std::string shown =
      shown_name(*ineq_path) + (eq_path ? " and " + shown_name(*eq_path) : "");
  const auto rows = static_cast<std::size_t>(ineq->rows() + eq.rows());
  if (labels_path && labels.size() != rows)
    return in.fail(label_count_problem(*labels_path, labels.size(), rows, shown));

  // A coordinate file is checked sparse, and the other matrix with it.
  if (ineq->sparse || eq.sparse) {
    ineq->make_sparse();
    eq.make_sparse();
  }
  const qualify::mfcq_report report =
      ineq->sparse ? qualify::check_mfcq(*ineq->sparse, *eq.sparse, options, std::move(labels))
                   : qualify::check_mfcq(*ineq->dense, *eq.dense, options, std::move(labels));
  if (report.result == qualify::verdict::invalid_input)
    return in.fail(
        {exit_code::data, shown + ": " + report.message,
         eq_path && report.message.find("equality") != std::string::npos ? *eq_path : *ineq_path,
         std::nullopt});
  return print_report(in, report);
}

// ---- lp -------------------------------------------------------------------------------------

const qualify_cli::command_spec lp_spec{
    "lp",
    "solve an LP model (MPS) with the library's interior-point engine",
    {"MODEL.mps"},
    {},
    "Solves min c^T x + c0 s.t. row bounds and column bounds, the LP in MODEL.mps (fixed or\n"
    "free MPS; '-' reads standard input), with the homogeneous self-dual interior-point\n"
    "method of <qualify/lp.hpp>. The objective includes the constant given by the RHS entry\n"
    "of the objective row. Integer markers are ignored (the LP relaxation is solved).\n",
    "Output: the status (optimal, infeasible, unbounded, iteration_limit, numerical_trouble),\n"
    "the objective, the iterations, residuals and violations. With --json, one JSON object\n"
    "with the keys schema_version, check, status, message, objective, iterations,\n"
    "primal_residual, dual_residual, gap, primal_violation, dual_violation, x and more.\n"
    "Exit status here: 0 optimal, 1 any other status.\n"};

int run_lp(const invocation& in) {
  const std::string& path = in.operands()[0];
  auto model = qualify_cli::read_mps_model(path);
  if (!model) return in.fail(model.error());
  const qualify::lp_result r =
      qualify::solve_lp(model->matrix, model->objective, model->row_lower, model->row_upper,
                        model->col_lower, model->col_upper, {}, model->objective_constant);
  if (r.status == qualify::lp_status::invalid_input)
    return in.fail({exit_code::data, shown_name(path) + ": " + r.message, path, std::nullopt});
  if (in.json())
    fmt::print("{}\n", qualify::to_json(r));
  else
    fmt::print("{:f}", r);
  return r.status == qualify::lp_status::optimal ? exit_code::holds : exit_code::fails;
}

// ---- slater ---------------------------------------------------------------------------------

const qualify_cli::command_spec slater_spec{
    "slater",
    "does the constraint set of an LP model (MPS) have a strict interior (Slater)?",
    {"MODEL.mps"},
    {{"--tol", "X",
      "relative slack tolerance tau, a number in (0, 0.1): an inequality is\n"
      "an implicit equality when no feasible point gives it a relative slack\n"
      "above tau, strict when one gives it 10 tau (default 1e-7)"}},
    "Checks the constraints of the LP in MODEL.mps (the objective is ignored): is there a\n"
    "feasible point (else a Farkas certificate names the rows), and a point at which every\n"
    "inequality row and every finite bound of an unfixed column holds strictly? For an\n"
    "affine model the refined Slater condition holds exactly when the model is feasible;\n"
    "the strict form fails exactly when some inequality is an implicit equality (tight on\n"
    "the whole feasible set): those rows and the columns their bounds pin are named.\n",
    "Output: the full report on stdout. With --json, one JSON object with the keys\n"
    "schema_version, check, verdict (holds, fails, undecided, infeasible, invalid_input),\n"
    "strict_interior, implicit_equalities (row names), implicit_fixed_columns (column\n"
    "names), margin, feasibility, refined_slater, findings and more.\n"
    "Exit status here: 0 holds, 1 fails or infeasible, 2 undecided.\n"};

int run_slater(const invocation& in) {
  const std::string& path = in.operands()[0];
  qualify::affine_slater_options options;
  if (const auto tol = in.value("--tol")) {
    const auto x = qualify_cli::parse_open_unit(*tol);
    if (!x || !(*x * options.undecided_band < 1))
      return in.usage_error(fmt::format("--tol must be a finite number in (0, 0.1), got {}",
                                        invocation::quote(*tol)));
    options.slack_tolerance = *x;
  }
  auto model = qualify_cli::read_mps_model(path);
  if (!model) return in.fail(model.error());
  const qualify::affine_slater_report report = qualify::check_affine_slater(
      model->matrix, model->row_lower, model->row_upper, model->col_lower, model->col_upper,
      options, model->row_names, model->col_names);
  if (report.result == qualify::verdict::invalid_input)
    return in.fail({exit_code::data, shown_name(path) + ": " + report.message, path, std::nullopt});
  return print_report(in, report);
}

// ---- kkt ------------------------------------------------------------------------------------

const qualify_cli::command_spec kkt_spec{
    "kkt",
    "is the point in POINT.json a KKT point, and what kind of point is it?",
    {"POINT.json"},
    {{"--tol", "X",
      "relative tolerance of the stationarity, dual and complementarity\n"
      "residuals and of the activity (and primal) test, a number in (0, 1)\n"
      "(default 1e-6; the rule of each is in the README)"}},
    "Checks the KKT conditions at the point described by POINT.json: a model evaluated at one\n"
    "point (x; the objective's gradient and optional Hessian; each constraint's name, type,\n"
    "declared kind, value, gradient and optional Hessian; optional multipliers and the claim\n"
    "convex_model), in the schema of the README, section 'Point files'; '-' reads standard\n"
    "input. Active rows are picked by the activity tolerance; the multipliers are those\n"
    "given, or estimated by bounded least squares (>= 0 on active inequalities, 0 on\n"
    "inactive ones, free on equalities). The report gives the stationarity, primal, dual and\n"
    "complementarity residuals (raw and scaled), LICQ, MFCQ and the linear CQ at x, whether\n"
    "the multipliers are unique and bounded (their ranges when not unique), the weakly active\n"
    "rows, the second-order tests (with the Hessians given) and a classification.\n",
    "Output: the full report on stdout. With --json, one JSON object with the keys\n"
    "schema_version, check, verdict, classification (not_kkt, undecided, kkt,\n"
    "kkt_unique_multipliers, strict_local_min, global_min, no_cq_holds), multipliers\n"
    "({name: value}), residuals, active, weakly_active, licq, mfcq, second_order and more.\n"
    "Exit status here: 0 a KKT point (certified within tolerance), 1 not one (not_kkt,\n"
    "no_cq_holds), 2 undecided.\n"};

int run_kkt(const invocation& in) {
  const std::string& path = in.operands()[0];
  qualify::kkt_options options;
  if (const auto tol = in.value("--tol")) {
    const auto x = qualify_cli::parse_open_unit(*tol);
    if (!x)
      return in.usage_error(
          fmt::format("--tol must be a finite number in (0, 1), got {}", invocation::quote(*tol)));
    options.stationarity_tolerance = options.dual_tolerance = options.complementarity_tolerance =
        options.activity.activity_tolerance = *x;
  }
  auto point = qualify_cli::read_point_file(path);
  if (!point) return in.fail(point.error());
  const qualify::kkt_report report =
      point->multipliers ? qualify::check_kkt(point->model, *point->multipliers, options)
                         : qualify::check_kkt(point->model, options);
  if (report.result == qualify::verdict::invalid_input)
    return in.fail({exit_code::data, shown_name(path) + ": " + report.message, path, std::nullopt});
  return print_report(in, report);
}

// ---- dispatch -------------------------------------------------------------------------------

const qualify_cli::command commands[] = {
    {&licq_spec, run_licq},
    {&mfcq_spec, run_mfcq},
    {&lp_spec, run_lp},
    {&slater_spec, run_slater},
    {&kkt_spec, run_kkt},
};

std::string top_usage() {
  std::string text =
      "Usage: qualify COMMAND [OPTIONS] FILE...\n"
      "       qualify --help | --version\n"
      "\n"
      "Constraint-qualification checks on files dumped from any optimizer.\n"
      "\n"
      "Commands:\n";
  for (const auto& c : commands) text += fmt::format("  {:<8} {}\n", c.spec->name, c.spec->summary);
  text += "\nRun 'qualify COMMAND --help' for the options of a command.\n\n";
  text += qualify_cli::exit_status_text;
  return text;
}

int run(const std::vector<std::string>& args) {
  const bool json = qualify_cli::wants_json(args);
  const auto usage = [&](std::string message) {
    return qualify_cli::report_problem({exit_code::usage, std::move(message), {}, {}}, "", json);
  };
  if (args.empty()) {
    std::fputs(top_usage().c_str(), stderr);
    return usage("missing COMMAND");
  }
  const std::string& first = args[0];
  if (first == "-h" || first == "--help") {
    fmt::print("{}", top_usage());
    return exit_code::holds;
  }
  if (first == "--version") {
    fmt::print("qualify {}.{}.{}\n", QUALIFY_VERSION_MAJOR, QUALIFY_VERSION_MINOR,
               QUALIFY_VERSION_PATCH);
    return exit_code::holds;
  }
  if (!first.empty() && first[0] == '-')
    return usage(fmt::format("unknown option {} before the COMMAND", invocation::quote(first)));
  for (const auto& c : commands) {
    if (c.spec->name != first) continue;
    auto parsed = invocation::parse(*c.spec, {args.begin() + 1, args.end()});
    if (!parsed) return qualify_cli::report_problem(parsed.error(), c.spec->name, json);
    if (parsed->help()) {
      fmt::print("{}", qualify_cli::usage_text(*c.spec));
      return exit_code::holds;
    }
    return c.run(*parsed);
  }
  return usage(fmt::format("unknown command {}", invocation::quote(first)));
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> args(argv + 1, argv + argc);
  int status = exit_code::internal;
  // The library throws only for programming errors and out of memory: both end here, as a
  // message and exit 70, never an abort.
  const auto internal = [&](std::string message) {
    try {
      return qualify_cli::report_problem({exit_code::internal, std::move(message), {}, {}}, "",
                                         qualify_cli::wants_json(args));
    } catch (...) {  // nothing more can be said
      return int(exit_code::internal);
    }
  };
  try {
    status = run(args);
  } catch (const std::bad_alloc&) {
    status = internal("out of memory");
  } catch (const std::exception& e) {
    status = internal(fmt::format("internal error: {}", e.what()));
  }
  // A full disk or a closed pipe shows up here, not as a silent success.
  if (std::fflush(stdout) != 0 || std::ferror(stdout)) {
    std::fputs("qualify: cannot write to standard output\n", stderr);
    return exit_code::output;
  }
  return status;
}
