#include <algorithm>
#include <cmath>
#include <numbers>

#include "analysis/crossings.hpp"
#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

double at_log_f(const LoopFunction& loop, double log_f, auto&& measure) { return measure(loop(std::pow(10.0, log_f))); }

GainCrossover refine_gain(const LoopFunction& loop, const detail::LineTable& table, const detail::Bracket& bracket) {
  const auto log_gain = [&](double u) { return at_log_f(loop, u, [](auto l) { return std::log(std::abs(l)); }); };
  const double u = detail::bisect(log_gain, table.log_f[bracket.index], table.log_f[bracket.index + 1]);
  GainCrossover c;
  const double frequency_hz = std::pow(10.0, u);
  const double phase_margin_deg = wrap_deg(180.0 + deg_from_rad(std::arg(loop(frequency_hz))));
  c.frequency_hz.value = frequency_hz;
  c.phase_margin_deg.value = phase_margin_deg;
  c.delay_margin_s.value = rad_from_deg(phase_margin_deg) / rad_per_s_from_hz(frequency_hz);
  return c;
}

PhaseCrossover refine_phase(const LoopFunction& loop, const detail::LineTable& table, const detail::Bracket& bracket) {
  // Near a crossing of the negative real axis the angle of -L is small and
  // continuous; its sign tells the side.
  const auto angle_from_axis = [&](double u) { return at_log_f(loop, u, [](auto l) { return std::arg(-l); }); };
  const double u = detail::bisect(angle_from_axis, table.log_f[bracket.index], table.log_f[bracket.index + 1]);
  PhaseCrossover c;
  c.frequency_hz.value = std::pow(10.0, u);
  c.gain_margin_db.value = -db_from_ratio(std::abs(loop(c.frequency_hz.value)));
  c.limits = detail::direction_of(c.gain_margin_db.value);
  return c;
}

ModulusPoint refine_modulus(const LoopFunction& loop, const detail::LineTable& table) {
  const std::size_t k = detail::modulus_minimum_index(table);
  const bool at_edge = k == 0 || k + 1 == table.size();
  const double a = table.log_f[k == 0 ? 0 : k - 1];
  const double b = table.log_f[std::min(k + 1, table.size() - 1)];
  const auto distance = [&](double u) { return at_log_f(loop, u, [](auto l) { return std::abs(1.0 + l); }); };
  const double u = detail::golden_minimum(distance, a, b);
  const double s_m = distance(u);
  return {std::pow(10.0, u), {s_m, std::nullopt}, {-db_from_ratio(s_m), std::nullopt}, at_edge};
}

DiskMargin refine_disk(const LoopFunction& loop, const detail::LineTable& table) {
  const auto spread = [&](double u) {
    return at_log_f(loop, u, [](auto l) { return std::abs((1.0 - l) / (1.0 + l)); });
  };
  std::size_t k = 0;
  for (std::size_t i = 1; i < table.size(); ++i) {
    if (spread(table.log_f[i]) > spread(table.log_f[k])) k = i;
  }
  const bool at_edge = k == 0 || k + 1 == table.size();
  const double a = table.log_f[k == 0 ? 0 : k - 1];
  const double b = table.log_f[std::min(k + 1, table.size() - 1)];
  const double u = detail::golden_minimum([&](double v) { return -spread(v); }, a, b);
  return disk_margin_from_peak(spread(u), std::pow(10.0, u), at_edge);
}

}  // namespace

Margins exact_margins(const LoopFunction& loop, double low_hz, double high_hz, std::size_t grid_lines) {
  if (!(low_hz > 0.0 && high_hz > low_hz) || grid_lines < 3) {
    throw ConfigError("exact margins need 0 < low_hz < high_hz and at least three grid lines");
  }
  std::vector<double> frequency_hz(grid_lines);
  std::vector<std::complex<double>> value(grid_lines);
  const double ratio = std::log10(high_hz / low_hz);
  for (std::size_t k = 0; k < grid_lines; ++k) {
    frequency_hz[k] = low_hz * std::pow(10.0, ratio * static_cast<double>(k) / static_cast<double>(grid_lines - 1));
    value[k] = loop(frequency_hz[k]);
  }
  const detail::LineTable table = detail::make_line_table(frequency_hz, value, {});
  Margins margins;
  margins.band_low_hz = low_hz;
  margins.band_high_hz = high_hz;
  margins.line_count = grid_lines;
  for (const auto& bracket : detail::gain_brackets(table)) margins.gain_crossovers.push_back(refine_gain(loop, table, bracket));
  for (const auto& bracket : detail::phase_brackets(table)) {
    margins.phase_crossovers.push_back(refine_phase(loop, table, bracket));
  }
  margins.modulus = refine_modulus(loop, table);
  margins.disk = refine_disk(loop, table);
  Response grid;
  grid.frequency_hz = frequency_hz;
  grid.value = value;
  margins.stability = assess_stability(grid);
  margins.summary = detail::summarize(margins);
  detail::add_absence_findings(table, margins);
  return margins;
}

}  // namespace loopaudit
