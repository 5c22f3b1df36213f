// The plots of an analysis, each a standalone SVG document: the Bode plot of
// L with its per-line interval and the margins marked, L in the complex plane
// near -1 and over the whole band, the coherence, and the sensitivity |S|.
//
// Curves are thinned to the pixels they cover (the data are not); lines that
// are not finite are left out and said so. A plot with nothing to draw still
// renders, with the reason in its middle.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "loopaudit/pipeline/result.hpp"

namespace loopaudit {

// Every plot's SVG document is shorter than this, whatever the number of
// lines: what is drawn is bounded by the plot's pixels (see draw_plots).
inline constexpr std::size_t kMostPlotBytes = 1000000;

struct Plot {
  std::string name;                // file stem: bode, nyquist-near, nyquist-whole, coherence, sensitivity
  std::string caption;             // one line under the plot in the report
  std::string svg;                 // a complete SVG document
  std::vector<std::string> notes;  // what is missing or clipped, for the reader
};

std::vector<Plot> draw_plots(const AnalysisResult& result);

}  // namespace loopaudit
