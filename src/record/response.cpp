#include "loopaudit/record/response.hpp"

namespace loopaudit {
namespace {

template <typename T>
std::vector<T> pick(const std::vector<T>& from, std::span<const std::size_t> lines) {
  std::vector<T> out;
  if (from.empty()) return out;
  out.reserve(lines.size());
  for (std::size_t k : lines) out.push_back(from.at(k));
  return out;
}

}  // namespace

Response select_lines(const Response& response, std::span<const std::size_t> lines) {
  Response out;
  out.method = response.method;
  out.frequency_hz = pick(response.frequency_hz, lines);
  out.value = pick(response.value, lines);
  out.coherence = pick(response.coherence, lines);
  out.relative_sigma = pick(response.relative_sigma, lines);
  out.snr_db = pick(response.snr_db, lines);
  for (const auto& replicate : response.replicates) out.replicates.push_back(pick(replicate, lines));
  return out;
}

}  // namespace loopaudit
