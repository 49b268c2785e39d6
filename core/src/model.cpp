#include "swashtune/model.hpp"

#include <unsupported/Eigen/AutoDiff>

namespace swashtune {

Jacobian jacobian(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x) {
  using Dual = Eigen::AutoDiffScalar<State>;
  StateOf<Dual> xd;
  for (int i = 0; i < state::size; ++i) xd[i] = Dual(x[i], state::size, i);
  const StateOf<Dual> f = derivatives<Dual>(p, d, modes, xd);
  Jacobian jac;
  for (int i = 0; i < state::size; ++i) jac.row(i) = f[i].derivatives().transpose();
  return jac;
}

}  // namespace swashtune
