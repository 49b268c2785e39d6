// A fixed-size Rosenbrock stepper with step-size control and dense output:
// Boost.Odeint's rosenbrock4 (the Shampine coefficients of its
// default_rosenbrock_coefficients, the same error norm, controller and
// interpolation), restated on Eigen fixed-size vectors. Odeint's own version
// works on uBLAS matrices with heap storage and spends most of its time in
// expression templates; for six states that dominated the run time.
#pragma once

#include <Eigen/Core>
#include <Eigen/LU>
#include <algorithm>
#include <boost/numeric/odeint/stepper/rosenbrock4.hpp>
#include <cmath>
#include <utility>

#include "swashtune/model/layout.hpp"

namespace swashtune::detail {

// LU factorisation with partial pivoting of a K x K matrix, K fixed and
// small (the layouts' 6 to 11 states). L (strictly below the diagonal) and
// U (strictly above, the diagonal kept as reciprocals) are stored apart and
// padded with zeros, so that elimination and both substitutions are whole
// rows against whole vectors, which the compiler vectorises; Eigen's
// PartialPivLU and triangular solvers, built for large blocks, cost about
// five times as much at this size (callgrind).
template <int K>
class SmallLU {
 public:
  using Rows = Eigen::Matrix<double, K, K, Eigen::RowMajor>;
  using Vector = Eigen::Matrix<double, K, 1>;

  template <class M>
  explicit SmallLU(const M& m) : upper_(m), lower_(Rows::Zero()) {
    for (int k = 0; k < K; ++k) {
      int pivot = k;
      double largest = std::abs(upper_(k, k));
      for (int i = k + 1; i < K; ++i)
        if (std::abs(upper_(i, k)) > largest) {
          largest = std::abs(upper_(i, k));
          pivot = i;
        }
      pivot_[k] = pivot;
      if (pivot != k) {
        upper_.row(k).swap(upper_.row(pivot));
        lower_.row(k).swap(lower_.row(pivot));
      }
      const double inverse = 1.0 / upper_(k, k);
      inverse_diagonal_[k] = inverse;
      for (int i = k + 1; i < K; ++i) {
        const double factor = upper_(i, k) * inverse;
        lower_(i, k) = factor;
        upper_.row(i) -= factor * upper_.row(k);  // columns left of k are zero in both rows
        upper_(i, k) = 0.0;
      }
      upper_(k, k) = 0.0;  // kept as its reciprocal
    }
  }

  Vector solve(Vector b) const {
    for (int k = 0; k < K; ++k)
      if (pivot_[k] != k) std::swap(b[k], b[pivot_[k]]);
    // Entries not yet final meet zeros in the padded rows.
    for (int i = 1; i < K; ++i) b[i] -= lower_.row(i).dot(b.transpose());
    for (int i = K - 1; i >= 0; --i) b[i] = (b[i] - upper_.row(i).dot(b.transpose())) * inverse_diagonal_[i];
    return b;
  }

 private:
  Rows upper_, lower_;
  double inverse_diagonal_[K];
  int pivot_[K];
};

template <int K, class M>
struct FactorisationOf {
  using type = SmallLU<K>;
};
template <class M>
struct FactorisationOf<Eigen::Dynamic, M> {
  using type = Eigen::PartialPivLU<M>;
};

// System: Vec rhs(double t, const Vec& x); void jacobian(double t, const Vec& x, Mat& J, Vec& dfdt).
// N may be Eigen::Dynamic with a fixed maximum MaxN: the vectors then live
// on the stack and take the size of the state they are given.
template <int N, int MaxN = N>
class Rosenbrock4 {
 public:
  using Vec = Eigen::Matrix<double, N, 1, 0, MaxN, 1>;
  using Mat = Eigen::Matrix<double, N, N, 0, MaxN, MaxN>;

  Rosenbrock4(double atol, double rtol) : atol_(atol), rtol_(rtol) {}

  // Attempts one step of dt from (t, x). On success x_new holds the result,
  // t has advanced by the step taken, dt holds the proposed next step and the
  // dense output covers the step; on failure dt holds a smaller step to try.
  template <class System>
  bool try_step(System& system, const Vec& x, double& t, Vec& x_new, double& dt) {
    Vec error;
    do_step(system, x, t, x_new, dt, error);
    const double err = error_norm(x_new, x, error);
    constexpr double safe = 0.9, fac1 = 5.0, fac2 = 1.0 / 6.0;
    double fac = std::max(fac2, std::min(fac1, std::pow(err, 0.25) / safe));
    double dt_new = dt / fac;
    if (err <= 1.0) {
      if (first_step_) {
        first_step_ = false;
      } else {
        double fac_pred = (dt_old_ / dt) * std::pow(err * err / err_old_, 0.25) / safe;
        fac_pred = std::max(fac2, std::min(fac1, fac_pred));
        fac = std::max(fac, fac_pred);
        dt_new = dt / fac;
      }
      dt_old_ = dt;
      err_old_ = std::max(0.01, err);
      if (last_rejected_) dt_new = std::min(dt_new, dt);
      t += dt;
      dt = dt_new;
      last_rejected_ = false;
      return true;
    }
    dt = dt_new;
    last_rejected_ = true;
    return false;
  }

  // The state at t inside the last accepted step [t_old, t_new].
  Vec interpolate(double t, const Vec& x_old, double t_old, const Vec& x_new, double t_new) const {
    const double s = (t - t_old) / (t_new - t_old);
    const double s1 = 1.0 - s;
    return x_old * s1 + s * (x_new + s1 * (cont3_ + s * cont4_));
  }

 private:
  // One step. The rates and the Jacobian at (t, x) are kept: a rejected
  // step retries from the same point with a smaller dt, so only the matrix
  // I/(gamma dt) - J is formed and factorised again.
  template <class System>
  void do_step(System& system, const Vec& x, double t, Vec& x_out, double dt, Vec& x_err) {
    if (!(have_point_ && t == point_t_ && x.size() == point_x_.size() && x == point_x_)) {
      point_dxdt_ = system.rhs(t, x);
      system.jacobian(t, x, point_jacobian_, point_dfdt_);
      point_t_ = t;
      point_x_ = x;
      have_point_ = true;
    }
    with_layout_size(static_cast<int>(x.size()),
                     [&](auto size) { stages<decltype(size)::value>(system, x, t, x_out, dt, x_err); });
  }

  // The stages with vectors and matrices of K entries (K fixed for the
  // common layouts: the factorisation and the solves are then unrolled,
  // which halves the cost of a step against Eigen's dynamic-size kernels).
  template <int K, class System>
  void stages(System& system, const Vec& x_in, double t, Vec& x_out, double dt, Vec& x_err) {
    using V = Eigen::Matrix<double, K, 1, 0, (K == Eigen::Dynamic ? MaxN : K), 1>;
    using M = Eigen::Matrix<double, K, K, 0, (K == Eigen::Dynamic ? MaxN : K), (K == Eigen::Dynamic ? MaxN : K)>;
    const auto& c = coef_;
    const int n = static_cast<int>(x_in.size());
    const V x = x_in;
    const V dfdt = point_dfdt_;
    const M m = M::Identity(n, n) / (c.gamma * dt) - M(point_jacobian_);
    const typename FactorisationOf<K, M>::type lu(m);
    const auto rhs = [&](double ts, const V& xs) -> V { return V(system.rhs(ts, Vec(xs))); };

    const V g1 = lu.solve(V(point_dxdt_) + dt * c.d1 * dfdt);
    V stage = x + c.a21 * g1;
    const V g2 = lu.solve(rhs(t + c.c2 * dt, stage) + dt * c.d2 * dfdt + c.c21 * g1 / dt);
    stage = x + c.a31 * g1 + c.a32 * g2;
    const V g3 = lu.solve(rhs(t + c.c3 * dt, stage) + dt * c.d3 * dfdt + (c.c31 * g1 + c.c32 * g2) / dt);
    stage = x + c.a41 * g1 + c.a42 * g2 + c.a43 * g3;
    const V g4 =
        lu.solve(rhs(t + c.c4 * dt, stage) + dt * gamma_sum_4 * dfdt + (c.c41 * g1 + c.c42 * g2 + c.c43 * g3) / dt);
    stage = x + c.a51 * g1 + c.a52 * g2 + c.a53 * g3 + c.a54 * g4;
    const V g5 = lu.solve(rhs(t + dt, stage) + (c.c51 * g1 + c.c52 * g2 + c.c53 * g3 + c.c54 * g4) / dt);
    stage += g5;
    const V err = lu.solve(rhs(t + dt, stage) + (c.c61 * g1 + c.c62 * g2 + c.c63 * g3 + c.c64 * g4 + c.c65 * g5) / dt);
    x_err = err;
    x_out = stage + err;
    // Dense output of this step (used only once the step is accepted).
    cont3_ = c.d21 * g1 + c.d22 * g2 + c.d23 * g3 + c.d24 * g4 + c.d25 * g5;
    cont4_ = c.d31 * g1 + c.d32 * g2 + c.d33 * g3 + c.d34 * g4 + c.d35 * g5;
  }

  double error_norm(const Vec& x, const Vec& x_old, const Vec& x_err) const {
    double err = 0.0;
    const int n = static_cast<int>(x.size());
    for (int i = 0; i < n; ++i) {
      const double sk = atol_ + rtol_ * std::max(std::abs(x_old[i]), std::abs(x[i]));
      err += x_err[i] * x_err[i] / (sk * sk);
    }
    return std::sqrt(err / n);
  }

  const boost::numeric::odeint::default_rosenbrock_coefficients<double> coef_;
  // The sum of the fourth row of the method's gamma matrix, which weights
  // df/dt in the fourth stage. Boost 1.74's table has +0.0362; the row sums
  // to -0.0362, the value of the method's published listing (Hairer & Wanner,
  // Solving Ordinary Differential Equations II). The wrong sign only shows
  // while a parameter ramps (df/dt != 0): found by the CVODE benchmark peer.
  static constexpr double gamma_sum_4 = -0.3620000000000023e-01;
  double atol_, rtol_;
  bool first_step_ = true;
  bool last_rejected_ = false;
  double err_old_ = 0.0, dt_old_ = 0.0;
  Vec cont3_, cont4_;
  // The point of the last attempted step and what was evaluated there.
  bool have_point_ = false;
  double point_t_ = 0.0;
  Vec point_x_, point_dxdt_, point_dfdt_;
  Mat point_jacobian_;
};

}  // namespace swashtune::detail
