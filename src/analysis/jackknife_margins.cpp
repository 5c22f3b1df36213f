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

// Where a listed group crosses on a replicate: the group's crossing on the
// lines moved by as much as the root of its fit moves (group_root), so that
// a crossing the lines hold in its bracket still moves with the noise.
double moved_crossing(const Group& g, double root_on_lines, const LineTable& t, const Curve& curve,
                      const MarginOptions& options) {
  return g.log_f + (group_root(g.members, t, curve, options, g.log_f) - root_on_lines);
}

// The roots of the listed groups' fits on the lines themselves.
struct Roots {
  std::vector<double> gain;
  std::vector<double> phase;
};

Roots roots_on(const LineTable& t, const ListedGroups& listed, const MarginOptions& options) {
  const Curve gain{t.gain_db, t.gain_sigma_db};
  const Curve phase{t.phase_deg, t.phase_sigma_deg};
  Roots r;
  for (const Group& g : listed.gain) r.gain.push_back(group_root(g.members, t, gain, options, g.log_f));
  for (const Group& g : listed.phase) r.phase.push_back(group_root(g.members, t, phase, options, g.log_f));
  return r;
}

Values values_of(const LineTable& t, const ListedGroups& listed, const Roots& roots, const Margins& lines_margins,
                 const MarginOptions& options, std::size_t modulus_k, std::size_t disk_k) {
  const Curve gain{t.gain_db, t.gain_sigma_db};
  const Curve phase{t.phase_deg, t.phase_sigma_deg};
  Values v;
  for (std::size_t i = 0; i < listed.gain.size(); ++i) {
    const auto& members = listed.gain[i].members;
    const double log_f = moved_crossing(listed.gain[i], roots.gain[i], t, gain, options);
    const double pm = near(180.0 + group_fit(t, phase, members, options).at(log_f),
                           lines_margins.gain_crossovers[i].phase_margin_deg.value);
    v.gain_log_f.push_back(log_f);
    v.phase_margin_deg.push_back(pm);
    v.delay_margin_s.push_back(rad_from_deg(pm) / rad_per_s_from_hz(std::pow(10.0, log_f)));
  }
  for (std::size_t i = 0; i < listed.phase.size(); ++i) {
    const Group& g = listed.phase[i];
    const double log_f = moved_crossing(g, roots.phase[i], t, phase, options);
    v.phase_log_f.push_back(log_f);
    v.gain_margin_db.push_back(-group_fit(t, gain, g.members, options).at(log_f));
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

}  // namespace

void jackknife_margins(const Response& lines, const LineTable& table, const ListedGroups& listed,
                       const MarginOptions& options, Margins& margins) {
  UncertaintyMethod& u = margins.uncertainty;
  if (lines.replicates.size() < 2) {
    u.method = IntervalMethod::kFirstOrder;
    u.half_width_factor = two_sided_z(options.confidence);
    u.first_order_reason = lines.method.no_replicates_reason;
    return;
  }
  const std::size_t modulus_k = modulus_line(table);
  const std::size_t disk_k = disk_line(table);
  const Roots roots = roots_on(table, listed, options);
  std::vector<Values> all;
  for (const auto& replicate : lines.replicates) {
    all.push_back(values_of(replicate_table(table, replicate), listed, roots, margins, options, modulus_k, disk_k));
  }
  u.method = IntervalMethod::kJackknife;
  u.replicates = all.size();
  u.degrees_of_freedom = static_cast<double>(all.size() - 1);
  u.half_width_factor = two_sided_t(options.confidence, u.degrees_of_freedom);
  u.basis = basis_of(lines.method, all.size());
  const Jackknifer jk{u.half_width_factor};
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
    margins.modulus->peak_sensitivity_db.method = margins.modulus->modulus_margin.method;
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
