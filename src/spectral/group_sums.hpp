// Sums of line arrays over contiguous groups of averages (Welch segments,
// whole periods), kept beside the totals for the delete-one-group jackknife.
//
// How many averages a record holds is known only at its end, so the groups
// grow as they stream in: each starts as one average, and when an average
// would open more than `most` groups, neighbouring groups merge in pairs and
// each holds twice as many from then on. At the end there are between
// most/2 and most groups (or one an average, for fewer), each of the same
// number of averages but the last, which holds the remainder; a remainder
// under half a group is merged into the group before it. Memory: at most
// `most` times `arrays` times `lines` complex values.
#pragma once

#include <complex>
#include <cstddef>
#include <vector>

namespace loopaudit::detail {

using GroupLines = std::vector<std::complex<double>>;

class GroupSums {
 public:
  GroupSums() = default;
  GroupSums(std::size_t arrays, std::size_t lines, std::size_t most);

  // Makes room for the averages up to `last_index` (0-based, in order of
  // time), merging groups as needed. Call before adding to them, from one
  // thread at a time.
  void make_room(std::size_t last_index);
  std::size_t group_of(std::size_t index) const { return index / per_group_; }
  // The running sum of one array in one group (within make_room's room).
  GroupLines& at(std::size_t group, std::size_t array);

  // The groups of `averages` averages ([group][array]), the short last one
  // merged; empty when there were fewer than two.
  std::vector<std::vector<GroupLines>> finish(std::size_t averages);
  std::size_t per_group() const { return per_group_; }

 private:
  std::size_t arrays_ = 0;
  std::size_t lines_ = 0;
  std::size_t most_ = 0;
  std::size_t per_group_ = 1;
  std::vector<std::vector<GroupLines>> groups_;  // [group][array]
};

// The most groups that fit a memory budget for `sets` sets of groups (one
// a Welch lane) of `arrays` arrays of `lines` lines, at most kMostGroups; 0
// when fewer than twice kFewestGroups would fit (a merge halves them).
std::size_t groups_within_budget(std::size_t arrays, std::size_t lines, std::size_t sets = 1);
// Bounds of the jackknife's groups: fewer than 6 give a variance with
// too few degrees of freedom to be worth it (the t quantile at 5 is 2.57),
// more than 32 add nothing a bench engineer would see (2.04 against 1.96
// for 95 %); 8 MiB holds 32 groups of the two cross-spectra of a
// 4096-sample segment four times over, and split between two Welch lanes it
// keeps at least 12 groups for segments of up to 21842 samples (longer ones
// get first-order intervals, and the method says why).
inline constexpr std::size_t kMostGroups = 32;
inline constexpr std::size_t kFewestGroups = 6;
inline constexpr std::size_t kGroupBudgetBytes = std::size_t{8} << 20;

}  // namespace loopaudit::detail
