// The margins as the Bode plot of L marks them. Every crossover has an id of
// its own: gain crossovers (|L| = 1) are numbered 1, 2, ... and drawn round,
// phase crossovers (phase at -180 deg, mod 360) are lettered A, B, ... and
// drawn square. On the curves each has a hollow mark where the curve meets its
// reference and a filled mark where its margin is read on the other pane, and
// each mark a tag with the id, joined to it by a short leader; below the
// panes a table gives, per id, the frequency, the margin and their intervals.
// Shape, fill and id carry the meaning, so a greyscale print reads the same.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {

struct CrossoverMark {
  bool gain_crossover = true;  // |L| = 1 with its phase margin; else a phase crossover with its gain margin
  std::string id;              // "1", "2", ... or "A", "B", ...
  Reading frequency;           // Hz
  Reading margin;              // phase margin (deg) or gain margin (dB)
};

inline constexpr std::size_t kMostMarkedEach = 9;  // ids 1 to 9 and A to I; the rest only in the notes

// Gain crossovers, then phase crossovers, each in ascending frequency; at
// most kMostMarkedEach of each kind.
std::vector<CrossoverMark> crossover_marks(const Margins& margins);

// The panes and the curves as drawn, which the tags keep clear of.
struct BodeGeometry {
  const svg::Panel& mag;
  const svg::Panel& phase;
  const std::vector<double>& f;
  const std::vector<double>& log_f;  // log10 of f
  const std::vector<double>& gain_db;
  const std::vector<double>& phase_deg;
};

void draw_crossover_marks(svg::Canvas& canvas, const BodeGeometry& g, const std::vector<CrossoverMark>& marks,
                          double canvas_width, double canvas_height);
// The table of the marks below the panes, its header's baseline at `top`.
double margin_table_height(std::size_t rows);
void draw_margin_table(svg::Canvas& canvas, double top, const std::vector<CrossoverMark>& marks, double confidence);
// The key lines that say what the marks mean, one a kind present, the first
// baseline at `y`.
double mark_key_height(const std::vector<CrossoverMark>& marks);
void draw_mark_key(svg::Canvas& canvas, double y, const std::vector<CrossoverMark>& marks);

}  // namespace loopaudit::plotting
