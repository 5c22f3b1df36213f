// Intervals of the margins from the jackknife: every listed crossover and
// the modulus and disk margins found again on each replicate of the lines
// (Response::replicates), by the same fits that found them on the lines
// themselves, and the spread of the replicates turned into intervals
// (record/jackknife.hpp). Line-to-line correlation, the curvature of a
// crossing and the bias of an extreme are all in the replicates, so no
// floor or correction of the first-order propagation is needed.
#pragma once

#include <vector>

#include "analysis/groups.hpp"

namespace loopaudit::detail {

// The groups that placed the listed crossovers, in the lists' order.
struct ListedGroups {
  std::vector<Group> gain;
  std::vector<Group> phase;
};

// Replaces the first-order intervals of margins' crossovers, modulus and
// disk margins by jackknife intervals when `lines` carries replicates (and
// says in margins.uncertainty which method made them, and why not the
// jackknife when it did not). The modulus margin and the disk margin's
// alpha are corrected for the bias the jackknife shows. Call before the
// summary is made.
void jackknife_margins(const Response& lines, const LineTable& table, const ListedGroups& listed,
                       const MarginOptions& options, Margins& margins);

}  // namespace loopaudit::detail
