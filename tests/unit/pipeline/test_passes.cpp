// How often analyze reads a recording: once for noise (from the detection
// prefix on), once for a record short enough to keep in memory, twice for a
// longer stepped sine, and never twice for a source that cannot be read twice.
#include <catch2/catch.hpp>

#include "loopaudit/error.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/synth/simulate.hpp"

using namespace loopaudit;

namespace {

Scenario scenario(InjectionKind kind, double duration_s) {
  Scenario s;
  s.name = "passes";
  s.sample_rate_hz = 8000.0;
  s.duration_s = duration_s;
  s.seed = 5;
  s.injection.kind = kind;
  s.injection.rms = 1.0;
  s.injection.low_hz = 20.0;
  s.injection.high_hz = 2500.0;
  s.injection.points = 12;
  s.injection.dwell_s = duration_s / 12.0;
  s.noise.x_rms = 0.02;
  s.noise.y_rms = 0.02;
  s.stages = {{"plant", 2000.0, 1, {}, {{1500.0, std::nullopt}}, Discretization::kZeroOrderHold}};
  s.delay_samples = 1;
  return s;
}

// A record served in blocks of `block_size`, saying it is a pipe when asked to.
class Served final : public SampleSource {
 public:
  Served(const Record& record, std::size_t block_size, bool pipe) : inner_(record, "served", block_size), pipe_(pipe) {}
  const std::vector<std::string>& channel_names() const override { return inner_.channel_names(); }
  bool next(SampleBlock& block) override { return inner_.next(block); }
  SourceSummary summary() const override { return inner_.summary(); }
  const std::string& origin() const override { return inner_.origin(); }
  std::string one_pass_kind() const override { return pipe_ ? "a pipe" : ""; }

 private:
  RecordSource inner_;
  bool pipe_;
};

struct Counted {
  const Record& record;
  std::size_t block_size = 65536;
  bool pipe = false;
  int opens = 0;

  SourceOpener opener() {
    return [this] {
      // A pipe read to its end has nothing left for a second reader.
      if (pipe && opens > 0) FAIL("a pipe was opened a second time");
      ++opens;
      return std::make_unique<Served>(record, block_size, pipe);
    };
  }
};

}  // namespace

TEST_CASE("analysis does not depend on the block size the reader hands out", "[pipeline]") {
  // Blocks of 33 samples: the detection prefix of 65536 samples spans about
  // 2000 of them, and every one must reach the estimator.
  const Synthesis noise = synthesize(scenario(InjectionKind::kNoise, 12.0));
  Counted large{noise.record};
  Counted small{noise.record, 33};
  const AnalysisResult a = analyze(large.opener(), {});
  const AnalysisResult b = analyze(small.opener(), {});
  CHECK(large.opens == 1);
  CHECK(small.opens == 1);
  CHECK(b.excitation_kind == ExcitationKind::kBroadband);
  REQUIRE(a.loop.lines.size() == b.loop.lines.size());
  CHECK(a.loop.lines.method.averages == b.loop.lines.method.averages);
  for (std::size_t k = 0; k < a.loop.lines.size(); ++k) {
    // The same samples in the same order: the sums differ only by rounding.
    CHECK(std::abs(a.loop.lines.value[k] - b.loop.lines.value[k]) <= 1e-9 * std::abs(a.loop.lines.value[k]));
  }
}

TEST_CASE("a short stepped sine is read once and a long one twice", "[pipeline]") {
  const Synthesis shorter = synthesize(scenario(InjectionKind::kStepped, 12.0));  // 96000 samples
  Counted once{shorter.record};
  const AnalysisResult a = analyze(once.opener(), {});
  CHECK(once.opens == 1);
  CHECK(a.excitation_kind == ExcitationKind::kStepped);
  Counted pipe{shorter.record, 65536, true};
  const AnalysisResult b = analyze(pipe.opener(), {});
  CHECK(pipe.opens == 1);
  REQUIRE(a.loop.lines.size() == b.loop.lines.size());
  for (std::size_t k = 0; k < a.loop.lines.size(); ++k) CHECK(a.loop.lines.value[k] == b.loop.lines.value[k]);

  const Synthesis longer = synthesize(scenario(InjectionKind::kStepped, 36.0));  // 288000: over what is kept
  Counted twice{longer.record};
  CHECK(analyze(twice.opener(), {}).excitation_kind == ExcitationKind::kStepped);
  CHECK(twice.opens == 2);
  Counted long_pipe{longer.record, 65536, true};
  CHECK_THROWS_WITH(analyze(long_pipe.opener(), {}), Catch::Contains("served is a pipe and cannot be read twice") &&
                                                         Catch::Contains("a stepped sine is read twice") &&
                                                         Catch::Contains("save it to a file first"));
  CHECK_THROWS_AS(analyze(Counted{longer.record, 65536, true}.opener(), {}), InputError);
}
