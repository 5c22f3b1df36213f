// Single-input single-output state-space models of a Stage, continuous and
// discretised (synthesis simulates them; the model stage evaluates them).
#pragma once

#include <Eigen/Dense>
#include <complex>

#include "loopaudit/model/transfer_function.hpp"

namespace loopaudit::detail {

struct StateSpace {
  Eigen::MatrixXd a;
  Eigen::VectorXd b;
  Eigen::RowVectorXd c;
  double d = 0.0;
};

// The stage as a cascade of first- and second-order sections, each scaled so
// that its states have the size of its input (well conditioned at any
// frequency). Throws ConfigError when the stage has more zeros than poles.
StateSpace continuous_stage(const Stage& stage);

StateSpace discretize(const StateSpace& continuous, Discretization method, double sample_period_s);

// H(e^{j theta}) of a discrete model, theta = 2 pi f / fs.
std::complex<double> discrete_response(const StateSpace& discrete, double theta);

// Runs a discrete model one sample at a time.
class StateRunner {
 public:
  explicit StateRunner(const StateSpace& model) : model_(model), state_(Eigen::VectorXd::Zero(model.a.rows())) {}
  double output(double input) const { return model_.c.dot(state_) + model_.d * input; }
  double step(double input);

 private:
  StateSpace model_;
  Eigen::VectorXd state_;
};

}  // namespace loopaudit::detail
