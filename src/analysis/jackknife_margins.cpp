#include "analysis/jackknife_margins.hpp"

#include <cmath>
#include <string>

#include "analysis/peaks.hpp"
#include "loopaudit/record/jackknife.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit::detail {
namespace {

// The margins of one replicate (or of the lines themselves), as plain values
// in the order of the listed ones: crossover frequencies in log10 Hz.
struct Values {
  std::vector<double> gain_log_f, phase_margin_deg, delay_margin_s;
  std::vector<double> phase_log_f, gain_margin_db;
  double modulus_margin = NAN;
  double disk_alpha = NAN;
};

// A replicate's lines as the crossing search sees them, its phase unwrapped
// along the lines' own (so that a replicate never lands a turn away), its
// sigmas the lines' own (the fits weigh every replicate alike).
LineTable replicate_table(const LineTable& lines, const std::vector<std::complex<double>>& values) {
  LineTable r = lines;
  r.value = values;
  for (std::size_t k = 0; k < r.size(); ++k) {
    r.gain_db[k] = db_from_ratio(std::abs(values[k]));
    r.phase_deg[k] = lines.phase_deg[k] + deg_from_rad(std::arg(values[k] / lines.value[k]));
  }
  return r;
}

// A margin read on a replicate, kept on the branch of the lines' own value.
double near(double value, double reference) { return reference + wrap_deg(value - reference); }

// A listed crossing as the replicates move it: its group's fits of both
// curves on the lines themselves, their values and slopes at the crossing.
// A replicate moves the crossing by its change of the crossing curve's fit
// there over that slope, and reads the other curve there plus its slope
// times that move.
// The slope is held: the local fit's own slope over a few sparse lines
// (a stepped sine's) is noisy, and a replicate that divides by it makes the
// jackknife's variance scatter from run to run with the slope, not with the
// noise at the crossing (measured on the calibration check's damped loop: a
// stepped sine's phase crossover held its truth 88 % of the time with the
// replicates' own roots, 95 % with the slope held).
struct Anchor {
  double log_f = 0.0;
  double own = 0.0, own_slope = 0.0;
  double other = 0.0, other_slope = 0.0;
};

std::vector<Anchor> anchors_of(const std::vector<Group>& groups, const LineTable& t, const Curve& own,
                               const Curve& other, const MarginOptions& options) {
  std::vector<Anchor> out;
  for (const Group& g : groups) {
    const LocalFit own_fit = group_fit(t, own, g.members, options);
    const LocalFit other_fit = group_fit(t, other, g.members, options);
    out.push_back({g.log_f, own_fit.at(g.log_f), own_fit.derivative_at(g.log_f), other_fit.at(g.log_f),
                   other_fit.derivative_at(g.log_f)});
  }
  return out;
}

struct Anchors {
  std::vector<Anchor> gain;
  std::vector<Anchor> phase;
};

// A crossing on a replicate: its log frequency and the other curve there.
std::pair<double, double> moved(const Anchor& a, const Group& g, const LineTable& t, const Curve& own,
                                const Curve& other, const MarginOptions& options) {
  const double shift = a.own_slope != 0.0 ? -(group_fit(t, own, g.members, options).at(a.log_f) - a.own) / a.own_slope
                                          : NAN;
  return {a.log_f + shift, group_fit(t, other, g.members, options).at(a.log_f) + a.other_slope * shift};
}

Values values_of(const LineTable& t, const ListedGroups& listed, const Anchors& anchors, const Margins& lines_margins,
                 const MarginOptions& options, std::size_t modulus_k, std::size_t disk_k) {
  const Curve gain{t.gain_db, t.gain_sigma_db};
  const Curve phase{t.phase_deg, t.phase_sigma_deg};
  Values v;
  for (std::size_t i = 0; i < listed.gain.size(); ++i) {
    const auto [log_f, other] = moved(anchors.gain[i], listed.gain[i], t, gain, phase, options);
    const double pm = near(180.0 + other, lines_margins.gain_crossovers[i].phase_margin_deg.value);
    v.gain_log_f.push_back(log_f);
    v.phase_margin_deg.push_back(pm);
    v.delay_margin_s.push_back(rad_from_deg(pm) / rad_per_s_from_hz(std::pow(10.0, log_f)));
  }
  for (std::size_t i = 0; i < listed.phase.size(); ++i) {
    const auto [log_f, other] = moved(anchors.phase[i], listed.phase[i], t, phase, gain, options);
    v.phase_log_f.push_back(log_f);
    v.gain_margin_db.push_back(-other);
  }
  if (lines_margins.modulus) v.modulus_margin = modulus_at(t, modulus_k, options);
  if (lines_margins.disk) v.disk_alpha = disk_alpha_at(t, disk_k, options);
  return v;
}

struct Jackknifer {
  double factor;  // the interval's half-width over the standard error

  // Replaces e's interval by the jackknife's (in log10 when `logarithmic`),
  // correcting e's value for the bias when asked. Leaves e as it is when a
  // replicate gave no finite value.
  void apply(Estimate& e, const std::vector<double>& replicates, bool logarithmic, bool correct_bias) const {
    for (double r : replicates) {
      if (!std::isfinite(r)) return;
    }
    const double full = logarithmic ? std::log10(e.value) : e.value;
    const JackknifeEstimate jk = jackknife(full, replicates);
    // A correction that would leave a positive quantity at or below zero
    // says the lines are too noisy to correct: the value stays.
    const bool corrected = correct_bias && (logarithmic || full <= 0.0 || full - jk.bias > 0.0);
    const double centre = corrected ? full - jk.bias : full;
    const double half = factor * std::sqrt(jk.variance);
    const auto back = [&](double u) { return logarithmic ? std::pow(10.0, u) : u; };
    e.first_order = e.interval;
    e.interval = Interval{back(centre - half), back(centre + half)};
    e.method = IntervalMethod::kJackknife;
    if (corrected) {
      e.uncorrected = e.value;
      e.value = back(centre);
    }
  }
};

std::string basis_of(const ResponseMethod& method, std::size_t replicates) {
  const std::string per = std::to_string(method.per_replicate);
  switch (method.replicate_kind) {
    case ReplicateKind::kGroups: {
      const char* what = method.kind == ResponseMethodKind::kPeriodic ? " periods" : " segments";
      return "each of " + std::to_string(replicates) + " contiguous groups of " + per + what + " left out in turn";
    }
    case ReplicateKind::kNoiseBeside:
      return "each line's error drawn from the noise at " + per + " frequencies beside its dwell's";
    case ReplicateKind::kNone: break;
  }
  return "";
}

// Column j of a list of per-replicate vectors.
template <typename Member>
std::vector<double> column(const std::vector<Values>& all, Member member, std::size_t j) {
  std::vector<double> out;
  for (const Values& v : all) out.push_back((v.*member)[j]);
  return out;
}

// The degrees of freedom of the jackknife's variance. With n replicates of
// Gaussian errors they are n - 1; heavier tails make a sample variance
// scatter more, var(s^2)/sigma^4 = 2/(n - 1) + (kappa - 3)/n for errors of
// kurtosis kappa (the variance of a sample variance, a textbook result; M.
// Kendall, A. Stuart, "The Advanced Theory of Statistics", vol. 1, from
// memory), so they are 2 / (2/(n - 1) + (kappa - 3)/n). The group sums of
// a random injection's cross-spectra are such: products of two Gaussian
// spectra (measured on a simulated loop: kappa about 4.9 for noise injection
// through Welch, 3.7 for a multisine through Welch, 3 for whole periods).
// kappa is the replicates' sample kurtosis pooled over the lines the margins
// are read from (the log deviation of each from the line's value, magnitude
// and phase apart), times (n + 1)/(n - 1), which makes it 3 on average for
// Gaussian errors; never below 3.
double degrees_of_freedom(const Response& lines, double max_line_sigma) {
  const std::size_t n = lines.replicates.size();
  const double count = static_cast<double>(n);
  double sum = 0.0, parts = 0.0;
  std::vector<double> d(n);
  for (std::size_t k = 0; k < lines.size(); ++k) {
    if (!(lines.relative_sigma[k] > 0.0 && lines.relative_sigma[k] <= max_line_sigma)) continue;
    for (const bool phase : {false, true}) {
      double mean = 0.0;
      for (std::size_t i = 0; i < n; ++i) {
        const std::complex<double> log_ratio = std::log(lines.replicates[i][k] / lines.value[k]);
        d[i] = phase ? log_ratio.imag() : log_ratio.real();
        mean += d[i] / count;
      }
      double m2 = 0.0, m4 = 0.0;
      for (double v : d) {
        m2 += (v - mean) * (v - mean) / count;
        m4 += std::pow(v - mean, 4) / count;
      }
      if (!(m2 > 0.0) || !std::isfinite(m4)) continue;
      sum += m4 / (m2 * m2);
      parts += 1.0;
    }
  }
  if (parts == 0.0) return count - 1.0;
  const double kappa = std::max(3.0, sum / parts * (count + 1.0) / (count - 1.0));
  return 2.0 / (2.0 / (count - 1.0) + (kappa - 3.0) / count);
}

}  // namespace

void jackknife_margins(const Response& lines, const LineTable& table, const ListedGroups& listed,
                       const MarginOptions& options, Margins& margins) {
  UncertaintyMethod& u = margins.uncertainty;
  if (lines.replicates.size() < 2) {
    u.method = IntervalMethod::kFirstOrder;
    u.half_width_factor = two_sided_z(options.confidence);
    u.first_order_reason = *lines.method.no_replicates_reason
                               ? lines.method.no_replicates_reason
                               : "the lines carry their sigmas but no replicates (a table, or a single average)";
    return;
  }
  const std::size_t modulus_k = modulus_line(table);
  const std::size_t disk_k = disk_line(table);
  const Curve gain{table.gain_db, table.gain_sigma_db};
  const Curve phase{table.phase_deg, table.phase_sigma_deg};
  const Anchors anchors{anchors_of(listed.gain, table, gain, phase, options),
                        anchors_of(listed.phase, table, phase, gain, options)};
  std::vector<Values> all;
  for (const auto& replicate : lines.replicates) {
    all.push_back(values_of(replicate_table(table, replicate), listed, anchors, margins, options, modulus_k, disk_k));
  }
  u.method = IntervalMethod::kJackknife;
  u.replicates = all.size();
  u.degrees_of_freedom = degrees_of_freedom(lines, options.max_line_sigma);
  u.half_width_factor = two_sided_t(options.confidence, u.degrees_of_freedom);
  u.basis = basis_of(lines.method, all.size());
  const Jackknifer jk{u.half_width_factor * std::sqrt(lines.method.replicate_variance_factor)};
  for (std::size_t i = 0; i < margins.gain_crossovers.size(); ++i) {
    GainCrossover& c = margins.gain_crossovers[i];
    jk.apply(c.frequency_hz, column(all, &Values::gain_log_f, i), true, false);
    jk.apply(c.phase_margin_deg, column(all, &Values::phase_margin_deg, i), false, false);
    jk.apply(c.delay_margin_s, column(all, &Values::delay_margin_s, i), false, false);
  }
  for (std::size_t i = 0; i < margins.phase_crossovers.size(); ++i) {
    PhaseCrossover& c = margins.phase_crossovers[i];
    jk.apply(c.frequency_hz, column(all, &Values::phase_log_f, i), true, false);
    jk.apply(c.gain_margin_db, column(all, &Values::gain_margin_db, i), false, false);
  }
  const auto scalar = [&](double Values::*member) {
    std::vector<double> out;
    for (const Values& v : all) out.push_back(v.*member);
    return out;
  };
  if (margins.modulus && !margins.modulus->at_band_edge) {
    jk.apply(margins.modulus->modulus_margin, scalar(&Values::modulus_margin), false, true);
    set_peak_sensitivity(*margins.modulus);
  }
  if (margins.disk && !margins.disk->at_band_edge) {
    Estimate alpha = margins.disk->alpha;
    jk.apply(alpha, scalar(&Values::disk_alpha), false, true);
    if (alpha.method == IntervalMethod::kJackknife) {
      DiskMargin disk = disk_margin_from_peak(2.0 / alpha.value, margins.disk->frequency_hz, false);
      disk.alpha = alpha;
      if (alpha.interval) set_disk_interval(disk, *alpha.interval);
      disk.gain_high_db.method = disk.phase_deg.method = IntervalMethod::kJackknife;
      margins.disk = disk;
    }
  }
}

}  // namespace loopaudit::detail
