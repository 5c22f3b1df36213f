#include <catch2/catch.hpp>
#include <string>

#include "loopaudit/error.hpp"
#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/fft/window.hpp"
#include "loopaudit/ingest/recording.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/model/transfer_function.hpp"
#include "loopaudit/names.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/margins.hpp"
#include "loopaudit/spectral/response.hpp"
#include "loopaudit/synth/scenario.hpp"

using namespace loopaudit;

namespace {

// Every entry's name leads back to its value and the value to the name. The
// enums are numbered from zero in declaration order, so a table that lists
// value i at position i holds every value of its enum.
template <typename Enum, std::size_t N>
void check_round_trip(const NameTable<Enum, N>& table) {
  for (std::size_t i = 0; i < N; ++i) {
    INFO("entry " << i << ": " << table[i].name);
    CHECK(static_cast<std::size_t>(table[i].value) == i);
    CHECK(std::string(name_of(table, table[i].value)) == table[i].name);
    CHECK(value_of(table, table[i].name, {"test"}) == table[i].value);
  }
}

std::string message_of(const auto& call) {
  try {
    call();
  } catch (const ConfigError& e) {
    return e.what();
  }
  return "(no ConfigError)";
}

}  // namespace

TEST_CASE("every name table maps each value to its name and back", "[record][names]") {
  check_round_trip(kWindowNames);
  check_round_trip(kConventionNames);
  check_round_trip(kExcitationNames);
  check_round_trip(kFormatNames);
  check_round_trip(kSampleTypeNames);
  check_round_trip(kEstimatorNames);
  check_round_trip(kDiscretizationNames);
  check_round_trip(kInjectionKindNames);
  check_round_trip(kSeverityNames);
  check_round_trip(kVerdictNames);
  check_round_trip(kDirectionNames);
}

TEST_CASE("the name functions of each stage read their table", "[record][names]") {
  for (const auto& e : kWindowNames) CHECK(window_from_name(window_name(e.value)) == e.value);
  for (const auto& e : kConventionNames) CHECK(convention_from_name(convention_name(e.value)) == e.value);
  for (const auto& e : kExcitationNames) {
    CHECK(excitation_from_name(excitation_name(e.value)) == e.value);
    CHECK(excitation_setting_from_name(e.name) == e.value);
  }
  CHECK_FALSE(excitation_setting_from_name("auto").has_value());
  for (const auto& e : kEstimatorNames) CHECK(estimator_from_name(estimator_name(e.value)) == e.value);
  for (const auto& e : kFormatNames) CHECK(format_from_name(e.name) == e.value);
  for (const auto& e : kSampleTypeNames) CHECK(sample_type_from_name(e.name) == e.value);
  for (const auto& e : kInjectionKindNames) CHECK(std::string(injection_kind_name(e.value)) == e.name);
  for (const auto& e : kSeverityNames) CHECK(std::string(severity_name(e.value)) == e.name);
  for (const auto& e : kVerdictNames) CHECK(std::string(verdict_name(e.value)) == e.name);
  for (const auto& e : kDirectionNames) CHECK(std::string(direction_name(e.value)) == e.name);
}

TEST_CASE("an unknown name is refused with the choices of its table", "[record][names]") {
  // The CLI e2e test and the window test check this wording.
  CHECK(message_of([] { window_from_name("kaiser"); }) ==
        "unknown window 'kaiser'; choose one of rectangular, hann, hamming, blackman-harris");
  CHECK(message_of([] { convention_from_name("open"); }) ==
        "unknown convention 'open'; choose one of series-injection, direct, closed-loop");
  CHECK(message_of([] { format_from_name("mat"); }) ==
        "unknown format 'mat'; choose one of auto, text, raw, wav, hdf5");
  CHECK(message_of([] { excitation_setting_from_name("sine"); }) ==
        "unknown excitation 'sine'; choose one of auto, broadband, periodic, stepped, chirp");
  CHECK(message_of([] {
          value_of(kDiscretizationNames, "tustin", {.what = "discretization", .where = "s.toml [plant]"});
        }) == "s.toml [plant]: unknown discretization 'tustin'; choose one of zoh, bilinear");
  CHECK(name_list(kSampleTypeNames) == "int16, int32, float32, float64");
  CHECK_THROWS_AS(estimator_from_name("Reference"), ConfigError);  // names are case-sensitive
}

TEST_CASE("a table with a repeated value or name is not one to one", "[record][names]") {
  enum class Two { kA, kB };
  constexpr NameTable<Two, 2> good{{{Two::kA, "a"}, {Two::kB, "b"}}};
  constexpr NameTable<Two, 2> same_value{{{Two::kA, "a"}, {Two::kA, "b"}}};
  constexpr NameTable<Two, 2> same_name{{{Two::kA, "a"}, {Two::kB, "a"}}};
  STATIC_REQUIRE(one_to_one(good));
  STATIC_REQUIRE_FALSE(one_to_one(same_value));
  STATIC_REQUIRE_FALSE(one_to_one(same_name));
}
