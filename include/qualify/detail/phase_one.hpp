// qualify: the phase-one barrier method for smooth convex constraints, behind check_slater.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>
#include <qualify/model.hpp>
#include <qualify/report.hpp>
#include <string>
#include <vector>

namespace qualify::detail {

/// Evaluates parts of a callback model at trial points, each answer checked like
/// evaluate_model does. A wrong size is `fatal` (the model is broken); a throw or a non-finite
/// entry marks a point outside the callbacks' domain, which a line search steps back from.
class model_probe {
 public:
  model_probe(const callback_model& model, const row_names& names) : model_(model), names_(names) {}

  bool values(const Eigen::VectorXd& x, Eigen::VectorXd& out) {
    Eigen::MatrixXd v;
    if (!run(
            "constraint_values", [&] { v = model_.constraint_values(x); }, v, model_.constraints(),
            1, true, ""))
      return false;
    out = v.col(0);
    return true;
  }
  bool jacobian(const Eigen::VectorXd& x, Eigen::MatrixXd& out) {
    return run(
        "constraint_jacobian", [&] { out = model_.constraint_jacobian(x); }, out,
        model_.constraints(), model_.variables, true, "");
  }
  bool hessian(const Eigen::VectorXd& x, Index row, Eigen::MatrixXd& out) {
    return run(
        "constraint_hessian", [&] { out = model_.constraint_hessian(x, row); }, out,
        model_.variables, model_.variables, false, " (for " + names_(row) + ")");
  }

  bool fatal() const noexcept { return code_ == "callback_size"; }
  const std::string& code() const noexcept { return code_; }
  const std::string& error() const noexcept { return error_; }
  int evaluations = 0;  ///< callback calls made

 private:
  template <class Fn>
  bool run(const char* name, Fn&& fn, Eigen::MatrixXd& out, Index rows, Index cols, bool rows_named,
           const std::string& suffix) {
    if (fatal()) return false;  // a broken model stays broken: keep the first message
    ++evaluations;
    std::string error;
    if (!run_callback(name, fn, error)) {
      code_ = "callback_failed";
      error_ = error + suffix;
      return false;
    }
    std::string code;
    error = check_callback_result(name, out, rows, cols, names_, rows_named, code);
    if (error.empty()) return true;
    code_ = std::move(code);
    error_ = error + suffix;
    return false;
  }

  const callback_model& model_;
  const row_names& names_;
  std::string code_, error_;
};

/// The phase-one problem (Boyd and Vandenberghe, Convex Optimization, 2004, sec. 11.4.1),
/// over the model's rows divided by `weight`:
///   minimise s  s.t.  g_i(x)/w_i <= s (convex rows),  c_k(x) <= 0 (affine rows),
///   c_j(x) = 0 (equality rows),  s >= -1,  ||x - start||_2 <= radius.
/// The ball keeps the barrier problem bounded when a constraint decreases without end along
/// a direction (the bounded-sublevel-set assumption of sec. 11.3); `start` is strictly inside
/// the affine rows and on the equalities.
struct phase_one_setup {
  std::vector<Index> convex_rows, affine_rows, equality_rows;
  Eigen::VectorXd weight;  ///< per model row, > 0
  Eigen::VectorXd start;
  double radius = 1;
  bool exact_hessians = true;
  double barrier_factor = 10;  ///< t grows by this after each centring
  int max_newton_steps = 500;
  /// Stop raising t once (number of barrier terms) / t <= final_gap.
  double final_gap = 1e-11;
  /// A point with max_i g_i/w_i <= target ends the search (after its centring).
  double target = -1e-6;
};

/// The dual evidence at a centred point x̄ (sec. 11.2.2 of the same book): multipliers
/// lambda_i = 1/(t u_i) on the convex rows (scaled to sum 1), nu_k >= 0 on the affine rows,
/// mu_j on the equality rows (least squares), and the ball's multiplier. With
///   phi(x) = sum lambda_i g_i(x)/w_i + sum nu_k c_k(x)/w_k + sum mu_j c_j(x)/w_j
/// (convex), every x of the affine feasible set S has max_i g_i(x)/w_i >= phi(x), and
///   phi(x) >= phi(x̄) - ||grad phi(x̄)|| ||x - x̄||.
/// `lower_bound` is that bound over S within the ball (the better of the bound with the
/// ball's term, phi + nu_B (||x - start||^2 - R^2), strongly convex, and the bound without
/// it), less a rounding allowance.
struct phase_one_certificate {
  Eigen::VectorXd x;
  Eigen::VectorXd multipliers;  ///< per model row (lambda, nu or mu; 0 elsewhere)
  double ball_multiplier = 0;
  double value = 0;          ///< phi(x̄), without the ball's term
  double gradient_norm = 0;  ///< ||grad phi(x̄)||_2, without the ball's term
  double distance = 0;       ///< ||x̄ - start||_2
  double lower_bound = -std::numeric_limits<double>::infinity();
  double barrier_parameter = 0;
};

enum class phase_one_end {
  found,          ///< an iterate has max g_i/w_i <= target
  decided,        ///< the caller's test accepted a certificate
  gap_reached,    ///< t reached its limit undecided
  step_limit,     ///< max_newton_steps used up
  stalled,        ///< no step could be taken from a point that is not centred
  callback_error  ///< a callback returned a wrong size, or failed at the start
};

struct phase_one_result {
  phase_one_end end = phase_one_end::stalled;
  Eigen::VectorXd best_x;  ///< the iterate with the smallest max g_i/w_i
  double best_max = std::numeric_limits<double>::infinity();
  std::optional<phase_one_certificate> certificate;  ///< at the last centred point
  int newton_steps = 0, rounds = 0, domain_exits = 0;
  double barrier_parameter = 0;
  std::string message;
};

/// Runs the barrier method of sec. 11.3 on the phase-one problem: Newton steps with
/// equality constraints (sec. 10.2, here in the null space of the equality gradients at the
/// start), a backtracking line search (sec. 9.2, alpha = 0.01, beta = 0.5) that also backs
/// off from points where a callback throws or returns NaN/Inf, exact Hessians or a damped
/// BFGS approximation of sum lambda_i hess g_i/w_i (Powell, "A fast algorithm for nonlinearly
/// constrained optimization calculations", 1978; Nocedal and Wright, Numerical Optimization,
/// 2006, procedure 18.2, with the initial scaling of eq. 6.20). After each centring
/// `decided(certificate)` may end the run.
inline phase_one_result run_phase_one(
    model_probe& probe, const phase_one_setup& p,
    const std::function<bool(const phase_one_certificate&)>& decided) {
  using Eigen::MatrixXd;
  using Eigen::VectorXd;
  phase_one_result out;
  const Index n = p.start.size();
  const auto N = Index(p.convex_rows.size()), K = Index(p.affine_rows.size()),
             Q = Index(p.equality_rows.size());
  const double R2 = p.radius * p.radius;
  const VectorXd& centre = p.start;

  VectorXd x = p.start, values;
  MatrixXd jac;
  std::vector<MatrixXd> hess(static_cast<std::size_t>(N));
  auto fail = [&](phase_one_end end) {
    out.end = end;
    out.message = probe.error();
    return out;
  };
  auto derivatives = [&](const VectorXd& at) {
    if (!probe.jacobian(at, jac)) return false;
    if (p.exact_hessians)
      for (Index i = 0; i < N; ++i)
        if (!probe.hessian(at, p.convex_rows[std::size_t(i)], hess[std::size_t(i)])) return false;
    return true;
  };
  if (!probe.values(x, values) || !derivatives(x)) return fail(phase_one_end::callback_error);
  auto scaled = [&](const VectorXd& v, const std::vector<Index>& rows) {
    VectorXd g(Index(rows.size()));
    for (std::size_t k = 0; k < rows.size(); ++k) g[Index(k)] = v[rows[k]] / p.weight[rows[k]];
    return g;
  };
  auto gradients = [&](const std::vector<Index>& rows) {
    MatrixXd G(Index(rows.size()), n);
    for (std::size_t k = 0; k < rows.size(); ++k)
      G.row(Index(k)) = jac.row(rows[k]) / p.weight[rows[k]];
    return G;
  };

  VectorXd g = scaled(values, p.convex_rows);  // g_i / w_i
  VectorXd c = scaled(values, p.affine_rows);  // c_k / w_k < 0
  out.best_x = x;
  out.best_max = g.maxCoeff();
  if (out.best_max <= p.target) {
    out.end = phase_one_end::found;
    return out;
  }

  // Steps stay in the null space of the equality gradients at the start.
  MatrixXd Z;
  if (Q > 0) {
    const MatrixXd E = gradients(p.equality_rows);
    Eigen::ColPivHouseholderQR<MatrixXd> qr(E.transpose());
    qr.setThreshold(1e-10);  // relative to the largest pivot (common practice, no source)
    const Index rank = qr.rank();
    Z = (qr.householderQ() * MatrixXd::Identity(n, n)).rightCols(n - rank);
  }
  const Index nr = Q > 0 ? Z.cols() : n;

  double s = std::max(out.best_max, -1.0) + 1.0;
  // The constraints are scaled to about 1 at x0 (sec. 11.3.1), where t = 1 suits; from a start
  // far from x0 (the affine part's LP point) s can be 1e5 and t s would then need as many
  // damped Newton steps: t = 1 / s keeps t s about 1.
  double t = 1.0 / std::max(1.0, s);
  MatrixXd B;      // BFGS: sum lambda_i hess(g_i / w_i)
  bool bfgs_scaled = false;
  if (!p.exact_hessians) B = MatrixXd::Identity(n, n);

  auto barrier = [&](const VectorXd& gv, const VectorXd& cv, double sv, const VectorXd& xv,
                     double tv, bool& inside) {
    const double beta = R2 - (xv - centre).squaredNorm();
    inside = sv + 1 > 0 && beta > 0 && (sv - gv.array() > 0).all() && (cv.array() < 0).all();
    if (!inside) return std::numeric_limits<double>::infinity();
    return tv * sv - (sv - gv.array()).log().sum() - (-cv.array()).log().sum() - std::log(sv + 1) -
           std::log(beta);
  };

  const double terms = double(N + K + 2);
  for (;;) {
    ++out.rounds;
    bool centred = false;
    while (!centred) {
      if (out.newton_steps >= p.max_newton_steps) {
        out.end = out.best_max <= p.target ? phase_one_end::found : phase_one_end::step_limit;
        out.barrier_parameter = t;
        out.message = "the phase one used its " + std::to_string(p.max_newton_steps) +
                      " Newton steps (barrier parameter " + format_figure(t) + ")";
        return out;
      }
      const MatrixXd Gc = gradients(p.convex_rows), Ga = gradients(p.affine_rows);
      const VectorXd u = (s - g.array()).matrix(), v = (-c.array()).matrix();
      const VectorXd iu = u.cwiseInverse(), iv = v.cwiseInverse();
      const VectorXd dc = x - centre;
      const double beta = R2 - dc.squaredNorm();
      VectorXd gx = Gc.transpose() * iu + Ga.transpose() * iv + (2 / beta) * dc;
      const double gs = t - iu.sum() - 1 / (s + 1);
      MatrixXd H = MatrixXd::Zero(n, n);
      H.selfadjointView<Eigen::Lower>().rankUpdate(Gc.transpose() * iu.asDiagonal());
      H.selfadjointView<Eigen::Lower>().rankUpdate(Ga.transpose() * iv.asDiagonal());
      H.selfadjointView<Eigen::Lower>().rankUpdate(dc, 4 / (beta * beta));
      H = H.selfadjointView<Eigen::Lower>();
      H.diagonal().array() += 2 / beta;
      if (p.exact_hessians) {
        for (Index i = 0; i < N; ++i)
          H += hess[std::size_t(i)] / (p.weight[p.convex_rows[std::size_t(i)]] * u[i]);
      } else {
        H += t * B;
      }
      const VectorXd hxs = -Gc.transpose() * iu.cwiseAbs2();
      const double hss = iu.squaredNorm() + 1 / ((s + 1) * (s + 1));
      MatrixXd KK(nr + 1, nr + 1);
      VectorXd rhs(nr + 1);
      if (Q > 0) {
        KK.topLeftCorner(nr, nr) = Z.transpose() * H * Z;
        KK.topRightCorner(nr, 1) = Z.transpose() * hxs;
        rhs.head(nr) = -(Z.transpose() * gx);
      } else {
        KK.topLeftCorner(nr, nr) = H;
        KK.topRightCorner(nr, 1) = hxs;
        rhs.head(nr) = -gx;
      }
      KK.bottomLeftCorner(1, nr) = KK.topRightCorner(nr, 1).transpose();
      KK(nr, nr) = hss;
      rhs[nr] = -gs;
      // A tiny shift when rounding leaves the matrix indefinite (common practice, no source).
      Eigen::LDLT<MatrixXd> ldlt(KK);
      double shift = 1e-14 * std::max(1.0, KK.diagonal().cwiseAbs().maxCoeff());
      for (int k = 0; k < 8 && (ldlt.info() != Eigen::Success || !ldlt.isPositive()); ++k) {
        MatrixXd shifted = KK;
        shifted.diagonal().array() += shift;
        ldlt.compute(shifted);
        shift *= 100;
      }
      const VectorXd step = ldlt.solve(rhs);
      const VectorXd dx = Q > 0 ? VectorXd(Z * step.head(nr)) : VectorXd(step.head(nr));
      const double ds = step[nr];
      const double slope = gx.dot(dx) + gs * ds;  // -decrement^2
      if (!step.allFinite() || !(slope < 0)) {
        centred = true;  // no descent direction left: as centred as rounding allows
        break;
      }
      // Newton decrement^2 / 2 <= 1e-12: centred (sec. 10.2.4; a tight value, since the
      // certificate is read at the centre; common practice, no source).
      if (-slope / 2 <= 1e-12) centred = true;
      bool inside = true;
      const double F = barrier(g, c, s, x, t, inside);
      double alpha = 1;
      bool accepted = false;
      VectorXd xn, vn;
      for (int k = 0; k < 60 && !accepted; ++k, alpha *= 0.5) {
        xn = x + alpha * dx;
        const double sn = s + alpha * ds;
        if (!(sn + 1 > 0) || !(R2 - (xn - centre).squaredNorm() > 0)) continue;
        if (!probe.values(xn, vn)) {
          if (probe.fatal()) return fail(phase_one_end::callback_error);
          ++out.domain_exits;
          continue;
        }
        const VectorXd gn = scaled(vn, p.convex_rows), cn = scaled(vn, p.affine_rows);
        const double Fn = barrier(gn, cn, sn, xn, t, inside);
        if (!inside) continue;
        // Armijo; near the centre, rounding in F hides the decrease, so a step that does not
        // raise F beyond its rounding is taken too.
        const bool armijo = Fn <= F + 0.01 * alpha * slope ||
                            (-slope < 1e-8 && Fn <= F + 1e-13 * (1 + std::abs(F)));
        if (!armijo) continue;
        MatrixXd jac_old = jac;
        if (!derivatives(xn)) {
          if (probe.fatal()) return fail(phase_one_end::callback_error);
          ++out.domain_exits;
          jac = jac_old;
          if (p.exact_hessians && !derivatives(x)) return fail(phase_one_end::callback_error);
          continue;
        }
        accepted = true;
        if (!p.exact_hessians) {  // damped BFGS on sum lambda_i hess(g_i / w_i)
          const VectorXd un = (sn - gn.array()).matrix();
          VectorXd y = VectorXd::Zero(n);
          for (Index i = 0; i < N; ++i) {
            const Index row = p.convex_rows[std::size_t(i)];
            y += (jac.row(row) - jac_old.row(row)).transpose() / (p.weight[row] * t * un[i]);
          }
          const VectorXd sx = xn - x;
          const double sy = sx.dot(y);
          if (sx.squaredNorm() > 0) {
            if (!bfgs_scaled && sy > 0) {
              B = MatrixXd::Identity(n, n) * (y.squaredNorm() / sy);
              bfgs_scaled = true;
            }
            const VectorXd Bs = B * sx;
            const double sBs = sx.dot(Bs);
            if (sBs > 0) {
              const double theta = sy >= 0.2 * sBs ? 1.0 : 0.8 * sBs / (sBs - sy);
              const VectorXd r = theta * y + (1 - theta) * Bs;
              const double sr = sx.dot(r);
              if (sr > 0) B += r * r.transpose() / sr - Bs * Bs.transpose() / sBs;
            }
          }
        }
        x = xn;
        s = sn;
        values = vn;
        g = gn;
        c = cn;
      }
      if (!accepted) {
        if (centred || -slope < 1e-8) {
          centred = true;
          break;
        }
        out.end = out.best_max <= p.target ? phase_one_end::found : phase_one_end::stalled;
        out.barrier_parameter = t;
        out.message = "the line search found no acceptable step (Newton decrement^2 " +
                      format_figure(-slope) + ", barrier parameter " + format_figure(t) + ")" +
                      (probe.error().empty() ? "" : "; last callback failure: " + probe.error());
        return out;
      }
      ++out.newton_steps;
      const double now = g.maxCoeff();
      if (now < out.best_max) {
        out.best_max = now;
        out.best_x = x;
      }
    }
    out.barrier_parameter = t;
    if (out.best_max <= p.target) {
      out.end = phase_one_end::found;
      return out;
    }

    // The certificate: the multipliers of the centre (sec. 11.2.2), and phi evaluated at the
    // centre and at the points of a few Newton steps on phi itself (an approximation of the
    // dual function inf_x phi: phi's Hessian lacks the barrier's 1/u^2 terms, so its
    // gradient can be made small where the barrier's cannot). Every point gives a valid
    // bound; the best one is kept.
    const VectorXd lambda = (t * (s - g.array())).inverse().matrix();
    const VectorXd nu = (t * (-c.array())).inverse().matrix();
    const double total = lambda.sum();
    VectorXd fixed = VectorXd::Zero(values.size());  // lambda and nu, scaled to sum(lambda) = 1
    for (Index i = 0; i < N; ++i) fixed[p.convex_rows[std::size_t(i)]] = lambda[i] / total;
    for (Index k = 0; k < K; ++k) fixed[p.affine_rows[std::size_t(k)]] = nu[k] / total;
    const double nuB = 1 / (t * (R2 - (x - centre).squaredNorm()) * total);
    auto certify = [&](const VectorXd& at) {
      phase_one_certificate cert;
      cert.x = at;
      cert.barrier_parameter = t;
      cert.multipliers = fixed;
      cert.ball_multiplier = nuB;
      VectorXd r = jac.transpose() * fixed.cwiseQuotient(p.weight);
      const VectorXd dc = at - centre;
      if (Q > 0) {
        const MatrixXd E = gradients(p.equality_rows);
        const VectorXd mu =
            Eigen::ColPivHouseholderQR<MatrixXd>(E.transpose()).solve(-(r + 2 * nuB * dc));
        for (Index j = 0; j < Q; ++j) cert.multipliers[p.equality_rows[std::size_t(j)]] = mu[j];
        r += E.transpose() * mu;
      }
      double size = 0;  // sum of |terms| of phi, for the rounding allowance
      for (Index i = 0; i < values.size(); ++i) {
        const double term = cert.multipliers[i] * values[i] / p.weight[i];
        cert.value += term;
        size += std::abs(term);
      }
      cert.gradient_norm = r.norm();
      cert.distance = dc.norm();
      // For z in the ball, ||z - at|| <= R + ||at - centre||; with the ball's term phi is
      // 2 nuB-strongly convex, which bounds it by ||grad||^2 / (4 nuB) as well.
      const double reach = p.radius + cert.distance;
      const double gb = (r + 2 * nuB * dc).norm();
      const double with_ball = cert.value + nuB * (dc.squaredNorm() - R2) -
                               std::min(reach * gb, nuB > 0 ? gb * gb / (4 * nuB) : reach * gb);
      const double without_ball = cert.value - reach * cert.gradient_norm;
      const double rounding = 4 * double(values.size() + 2) *
                              std::numeric_limits<double>::epsilon() * (size + nuB * R2);
      cert.lower_bound = std::max(with_ball, without_ball) - rounding;
      return cert;
    };
    phase_one_certificate cert = certify(x);
    {
      const VectorXd x_keep = x, values_keep = values;
      const MatrixXd jac_keep = jac;
      const std::vector<MatrixXd> hess_keep = hess;
      auto phi = [&](const VectorXd& v) { return fixed.dot(v.cwiseQuotient(p.weight)); };
      VectorXd xp = x;
      for (int k = 0; k < 10; ++k) {
        const VectorXd r = jac.transpose() * fixed.cwiseQuotient(p.weight);
        MatrixXd H = MatrixXd::Zero(n, n);
        if (p.exact_hessians) {
          for (Index i = 0; i < N; ++i) {
            const Index row = p.convex_rows[std::size_t(i)];
            H += (fixed[row] / p.weight[row]) * hess[std::size_t(i)];
          }
        } else {
          H = B / total;
        }
        const MatrixXd Hr = Q > 0 ? MatrixXd(Z.transpose() * H * Z) : H;
        const VectorXd gr = Q > 0 ? VectorXd(Z.transpose() * r) : r;
        MatrixXd shifted = Hr;
        shifted.diagonal().array() += 1e-14 * std::max(1.0, Hr.diagonal().cwiseAbs().maxCoeff());
        const VectorXd step = -Eigen::LDLT<MatrixXd>(shifted).solve(gr);
        const VectorXd dx = Q > 0 ? VectorXd(Z * step) : step;
        const double slope = r.dot(dx);
        if (!dx.allFinite() || !(slope < 0)) break;
        const double f = phi(values);
        bool accepted = false;
        VectorXd vn;
        for (double alpha = 1; alpha > 1e-10 && !accepted; alpha *= 0.5) {
          const VectorXd xn = xp + alpha * dx;
          if (!probe.values(xn, vn)) {
            if (probe.fatal()) return fail(phase_one_end::callback_error);
            ++out.domain_exits;
            continue;
          }
          if (!(phi(vn) <= f + 1e-4 * alpha * slope || (-slope < 1e-20 && phi(vn) <= f))) continue;
          if (!derivatives(xn)) {
            if (probe.fatal()) return fail(phase_one_end::callback_error);
            ++out.domain_exits;
            break;
          }
          accepted = true;
          xp = xn;
          values = vn;
        }
        if (!accepted) break;
        const phase_one_certificate polished = certify(xp);
        if (polished.lower_bound > cert.lower_bound) cert = polished;
      }
      x = x_keep;
      values = values_keep;
      jac = jac_keep;
      hess = hess_keep;
    }
    out.certificate = cert;
    if (decided(cert)) {
      out.end = phase_one_end::decided;
      return out;
    }
    if (terms / t <= p.final_gap) {
      out.end = phase_one_end::gap_reached;
      return out;
    }
    t *= p.barrier_factor;
  }
}

}  // namespace qualify::detail
