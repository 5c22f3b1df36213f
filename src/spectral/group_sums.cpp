#include "spectral/group_sums.hpp"

#include <algorithm>

namespace loopaudit::detail {
namespace {

void add_into(GroupLines& to, const GroupLines& from) {
  for (std::size_t k = 0; k < to.size(); ++k) to[k] += from[k];
}

}  // namespace

GroupSums::GroupSums(std::size_t arrays, std::size_t lines, std::size_t most)
    : arrays_(arrays), lines_(lines), most_(std::max<std::size_t>(most, 2)) {}

void GroupSums::make_room(std::size_t last_index) {
  while (group_of(last_index) >= most_) {
    // Pairs of neighbours become one group of twice the averages.
    std::vector<std::vector<GroupLines>> merged;
    for (std::size_t g = 0; g < groups_.size(); g += 2) {
      merged.push_back(std::move(groups_[g]));
      if (g + 1 < groups_.size()) {
        for (std::size_t a = 0; a < arrays_; ++a) add_into(merged.back()[a], groups_[g + 1][a]);
      }
    }
    groups_ = std::move(merged);
    per_group_ *= 2;
  }
  while (groups_.size() <= group_of(last_index)) groups_.emplace_back(arrays_, GroupLines(lines_));
}

GroupLines& GroupSums::at(std::size_t group, std::size_t array) { return groups_.at(group).at(array); }

std::vector<std::vector<GroupLines>> GroupSums::finish(std::size_t averages) {
  if (averages < 2 || groups_.empty()) return {};
  groups_.resize(std::min(groups_.size(), group_of(averages - 1) + 1));
  const std::size_t in_last = averages - (groups_.size() - 1) * per_group_;
  if (groups_.size() > 2 && 2 * in_last < per_group_) {
    for (std::size_t a = 0; a < arrays_; ++a) add_into(groups_[groups_.size() - 2][a], groups_.back()[a]);
    groups_.pop_back();
  }
  return std::move(groups_);
}

std::size_t groups_within_budget(std::size_t arrays, std::size_t lines, std::size_t sets) {
  const std::size_t per_group = std::max<std::size_t>(arrays * lines * sizeof(std::complex<double>), 1);
  const std::size_t fit = std::min(kMostGroups, kGroupBudgetBytes / std::max<std::size_t>(sets, 1) / per_group);
  // Merging halves the groups: at least twice the fewest must fit.
  return fit >= 2 * kFewestGroups ? fit : 0;
}

}  // namespace loopaudit::detail
