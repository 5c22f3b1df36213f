#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/response_table.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/report/atomic_file.hpp"
#include "loopaudit/report/csv_report.hpp"
#include "loopaudit/report/json_report.hpp"
#include "temp_file.hpp"

using namespace loopaudit;

namespace {
std::string read_text(const std::string& path) {
  std::ifstream in(path);
  return {std::istreambuf_iterator<char>(in), {}};
}

Response small_response() {
  Response r;
  r.frequency_hz = {10.0, 20.0, 40.0};
  r.value = {{3.0, -1.0}, {-0.5, -0.8}, {-0.2, 0.05}};
  r.coherence = {0.99, 0.9, 0.5};
  r.relative_sigma = {0.01, 0.02, 0.1};
  return r;
}
}  // namespace

TEST_CASE("a failed write leaves the old file as it was and no temporary behind", "[report]") {
  testing::TempFile target("good content\n", ".json");
  CHECK_THROWS_AS(write_atomically(target.path(),
                                    [](std::ostream& out) {
                                      out << "half";
                                      throw OutputError("stopped");
                                    }),
                  OutputError);
  CHECK(read_text(target.path()) == "good content\n");
  const auto folder = std::filesystem::path(target.path()).parent_path();
  for (const auto& entry : std::filesystem::directory_iterator(folder)) {
    CHECK(entry.path().string().find(target.path() + ".tmp.") == std::string::npos);
  }
  CHECK_THROWS_AS(write_atomically("/nonexistent-folder/x.json", [](std::ostream&) {}), OutputError);
}

namespace {
// The names in a folder that start with prefix.
std::vector<std::string> names_starting(const std::filesystem::path& folder, const std::string& prefix) {
  std::vector<std::string> names;
  for (const auto& entry : std::filesystem::directory_iterator(folder)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind(prefix, 0) == 0) names.push_back(name);
  }
  std::sort(names.begin(), names.end());
  return names;
}

// A process number no process has: the kernel's pid_max is never handed out.
long pid_nobody_has() {
  std::ifstream in("/proc/sys/kernel/pid_max");
  long pid_max = 4194304;
  in >> pid_max;
  return pid_max;
}
}  // namespace

TEST_CASE("a file being written has no name in its folder until it is whole", "[report]") {
  // A run killed at any moment inside the write then leaves nothing behind.
  const auto folder = std::filesystem::temp_directory_path() / ("loopaudit_test_unnamed_" + std::to_string(::getpid()));
  std::filesystem::create_directories(folder);
  const std::string target = (folder / "lines.csv").string();
  std::vector<std::string> seen_while_writing;
  write_atomically(target, [&](std::ostream& out) {
    out << "freq_hz\n1\n";
    out.flush();
    seen_while_writing = names_starting(folder, "lines.csv");
  });
  CHECK(seen_while_writing.empty());
  CHECK(names_starting(folder, "lines.csv") == std::vector<std::string>{"lines.csv"});
  CHECK(read_text(target) == "freq_hz\n1\n");
  std::filesystem::remove_all(folder);
}

TEST_CASE("a writer's stale temporaries are swept, nothing else", "[report]") {
  const auto folder = std::filesystem::temp_directory_path() / ("loopaudit_test_sweep_" + std::to_string(::getpid()));
  std::filesystem::create_directories(folder);
  const std::string target = (folder / "bode.svg").string();
  const std::string dead = "bode.svg.tmp." + std::to_string(pid_nobody_has());
  const std::string alive = "bode.svg.tmp." + std::to_string(::getppid());
  for (const std::string& name : {dead, alive, std::string("bode.svg.tmp.notes"), "nyquist.svg.tmp." + dead.substr(13)}) {
    std::ofstream(folder / name) << "<svg";  // cut mid-write
  }
  write_atomically(target, [](std::ostream& out) { out << "<svg/>"; });
  CHECK(names_starting(folder, "") ==
        std::vector<std::string>{"bode.svg", alive, "bode.svg.tmp.notes", "nyquist.svg.tmp." + dead.substr(13)});
  std::filesystem::remove_all(folder);
}

TEST_CASE("the response CSV reads back as the same lines", "[report]") {
  const Response r = small_response();
  testing::TempFile file("");
  write_atomically(file.path(), [&](std::ostream& out) { write_response_csv(out, r); });
  const Response back = read_response_table(file.path()).response;
  REQUIRE(back.size() == r.size());
  for (std::size_t k = 0; k < r.size(); ++k) {
    CHECK(back.frequency_hz[k] == r.frequency_hz[k]);
    CHECK(back.value[k] == r.value[k]);
    CHECK(back.coherence[k] == r.coherence[k]);
    CHECK(back.relative_sigma[k] == Approx(r.relative_sigma[k]).epsilon(1e-12));
  }
}

TEST_CASE("the JSON has the documented keys with null where none is in band", "[report]") {
  AnalysisResult result = analyze_response("table.csv", small_response(), Convention::kDirect);
  const auto json = nlohmann::json::parse(analysis_json(result));
  CHECK(json["schema_version"] == kSchemaVersion);
  for (const char* key : {"gain_crossover_hz", "phase_margin_deg", "phase_crossover_hz", "gain_margin_db",
                          "delay_margin_s", "modulus_margin", "peak_sensitivity_db"}) {
    CHECK(json["summary"].contains(key));
  }
  REQUIRE(json["gain_crossovers"].size() == 1);
  CHECK(json["gain_crossovers"][0].contains("freq_hz"));
  CHECK(json["gain_crossovers"][0].contains("phase_margin_deg"));
  CHECK(json["phase_crossovers"].size() == 1);
  CHECK(json["phase_crossovers"][0].contains("gain_margin_db"));
  CHECK(json["input"]["kind"] == "table");
  CHECK(json["response"]["freq_hz"].size() == 3);

  Response no_crossing = small_response();
  no_crossing.value = {{3.0, 0.0}, {2.0, -0.1}, {1.5, -0.2}};
  const auto empty = nlohmann::json::parse(analysis_json(analyze_response("t", no_crossing, Convention::kDirect)));
  CHECK(empty["summary"]["phase_margin_deg"].is_null());
  CHECK(empty["summary"]["gain_margin_db"].is_null());
  CHECK(empty["gain_crossovers"].empty());
}
