#include "model/state_space.hpp"

#include <unsupported/Eigen/MatrixFunctions>
#include <algorithm>
#include <numbers>

#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// Numerator n0 + n1 s + n2 s^2 with s in rad/s.
struct Polynomial {
  double n0 = 1.0;
  double n1 = 0.0;
  double n2 = 0.0;
};

Polynomial times(const Polynomial& p, const Polynomial& q) {
  if (p.n2 != 0.0 && (q.n1 != 0.0 || q.n2 != 0.0)) throw std::logic_error("section numerator above second order");
  return {p.n0 * q.n0, p.n0 * q.n1 + p.n1 * q.n0, p.n0 * q.n2 + p.n1 * q.n1 + p.n2 * q.n0};
}

double omega_of(const Factor& f) { return 2.0 * std::numbers::pi * f.frequency_hz; }

Polynomial polynomial_of(const Factor& f) {
  const double w = omega_of(f);
  if (f.quality) return {1.0, 1.0 / (*f.quality * w), 1.0 / (w * w)};
  return {1.0, 1.0 / w, 0.0};
}

int degree_of(const Factor& f) { return f.quality ? 2 : 1; }

// Denominator kinds: s, s^2, (1 + s/w), (1 + s/(Q w) + s^2/w^2).
struct Section {
  int integrators = 0;  // 1 or 2 for s or s^2; 0 for a pole factor
  Factor pole;
  Polynomial numerator;
  int degree() const { return integrators > 0 ? integrators : degree_of(pole); }
};

StateSpace section_model(const Section& s) {
  StateSpace m;
  const Polynomial& n = s.numerator;
  if (s.integrators == 1) {  // N/s = n0/s + n1
    m.a = Eigen::MatrixXd::Zero(1, 1);
    m.b = Eigen::VectorXd::Ones(1);
    m.c = Eigen::RowVectorXd::Constant(1, n.n0);
    m.d = n.n1;
  } else if (s.integrators == 2) {  // N/s^2 = n0/s^2 + n1/s + n2
    m.a = Eigen::MatrixXd::Zero(2, 2);
    m.a(0, 1) = 1.0;
    m.b = Eigen::Vector2d(0.0, 1.0);
    m.c = Eigen::RowVector2d(n.n0, n.n1);
    m.d = n.n2;
  } else if (!s.pole.quality) {  // w/(s+w): states scaled by w
    const double w = omega_of(s.pole);
    m.a = Eigen::MatrixXd::Constant(1, 1, -w);
    m.b = Eigen::VectorXd::Constant(1, w);
    m.d = n.n1 * w;
    m.c = Eigen::RowVectorXd::Constant(1, n.n0 - n.n1 * w);
  } else {  // x1 = output of w^2/(s^2 + (w/Q) s + w^2), x2 = x1'/w
    const double w = omega_of(s.pole);
    const double q = *s.pole.quality;
    m.a = Eigen::MatrixXd(2, 2);
    m.a << 0.0, w, -w, -w / q;
    m.b = Eigen::Vector2d(0.0, w);
    m.d = n.n2 * w * w;
    m.c = Eigen::RowVector2d(n.n0 - n.n2 * w * w, (n.n1 - n.n2 * w / q) * w);
  }
  return m;
}

// Pairs every pole factor with zeros of no higher total degree.
std::vector<Section> make_sections(const Stage& stage) {
  std::vector<Factor> pairs;
  std::vector<Factor> reals;
  for (const Factor& z : stage.zeros) (z.quality ? pairs : reals).push_back(z);
  std::vector<Section> sections;
  if (stage.integrators > 0) sections.push_back({std::min(stage.integrators, 2), {}, {}});
  if (stage.integrators > 2) sections.push_back({stage.integrators - 2, {}, {}});
  for (const Factor& p : stage.poles) sections.push_back({0, p, {}});
  std::stable_sort(sections.begin(), sections.end(), [](const Section& a, const Section& b) { return a.degree() > b.degree(); });
  for (Section& s : sections) {
    if (s.degree() == 2 && !pairs.empty()) {
      s.numerator = polynomial_of(pairs.back());
      pairs.pop_back();
      continue;
    }
    for (int taken = 0; taken < s.degree() && !reals.empty(); ++taken) {
      s.numerator = times(s.numerator, polynomial_of(reals.back()));
      reals.pop_back();
    }
  }
  if (!pairs.empty() || !reals.empty()) {
    throw ConfigError("stage '" + stage.name +
                      "': more zeros than poles, or a zero pair with no pole pair or integrator pair to share a "
                      "section with");
  }
  return sections;
}

// (A2, B2, C2, D2) after (A1, B1, C1, D1).
StateSpace cascade(const StateSpace& first, const StateSpace& second) {
  const auto n1 = first.a.rows();
  const auto n2 = second.a.rows();
  StateSpace m;
  m.a = Eigen::MatrixXd::Zero(n1 + n2, n1 + n2);
  m.a.topLeftCorner(n1, n1) = first.a;
  m.a.bottomLeftCorner(n2, n1) = second.b * first.c;
  m.a.bottomRightCorner(n2, n2) = second.a;
  m.b = Eigen::VectorXd(n1 + n2);
  m.b << first.b, second.b * first.d;
  m.c = Eigen::RowVectorXd(n1 + n2);
  m.c << second.d * first.c, second.c;
  m.d = second.d * first.d;
  return m;
}

}  // namespace

StateSpace continuous_stage(const Stage& stage) {
  StateSpace model{Eigen::MatrixXd::Zero(0, 0), Eigen::VectorXd::Zero(0), Eigen::RowVectorXd::Zero(0), 1.0};
  for (const Section& s : make_sections(stage)) model = cascade(model, section_model(s));
  model.c *= stage.gain;
  model.d *= stage.gain;
  return model;
}

StateSpace discretize(const StateSpace& m, Discretization method, double t) {
  const auto n = m.a.rows();
  StateSpace out = m;
  if (n == 0) return out;
  if (method == Discretization::kZeroOrderHold) {
    Eigen::MatrixXd augmented = Eigen::MatrixXd::Zero(n + 1, n + 1);
    augmented.topLeftCorner(n, n) = m.a * t;
    augmented.topRightCorner(n, 1) = m.b * t;
    const Eigen::MatrixXd e = augmented.exp();
    out.a = e.topLeftCorner(n, n);
    out.b = e.topRightCorner(n, 1);
    return out;
  }
  const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(n, n);
  const Eigen::MatrixXd inverse = (identity - m.a * (t / 2.0)).inverse();
  out.a = inverse * (identity + m.a * (t / 2.0));
  out.b = inverse * m.b * t;
  out.c = m.c * inverse;
  out.d = m.d + (m.c * inverse * m.b)(0) * t / 2.0;
  return out;
}

std::complex<double> discrete_response(const StateSpace& m, double theta) {
  const auto n = m.a.rows();
  if (n == 0) return m.d;
  const std::complex<double> z = std::polar(1.0, theta);
  const Eigen::MatrixXcd resolvent = Eigen::MatrixXcd::Identity(n, n) * z - m.a.cast<std::complex<double>>();
  const Eigen::VectorXcd solved = resolvent.partialPivLu().solve(m.b.cast<std::complex<double>>());
  return (m.c.cast<std::complex<double>>() * solved)(0) + m.d;
}

double StateRunner::step(double input) {
  const double y = output(input);
  state_ = model_.a * state_ + model_.b * input;
  return y;
}

}  // namespace loopaudit::detail
