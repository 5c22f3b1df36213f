#include "loopaudit/ingest/recording.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <map>
#include <sstream>
#include <string_view>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

RecordingFormat format_from_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
  if (ext == ".wav") return RecordingFormat::kWav;
  if (ext == ".h5" || ext == ".hdf5" || ext == ".he5") return RecordingFormat::kHdf5;
  if (ext == ".bin" || ext == ".raw" || ext == ".dat") return RecordingFormat::kRaw;
  return RecordingFormat::kText;
}

std::vector<double> expand(const std::vector<double>& values, std::size_t count, double fallback, const char* what,
                           const std::string& path) {
  if (values.empty()) return std::vector<double>(count, fallback);
  if (values.size() == 1) return std::vector<double>(count, values.front());
  if (values.size() != count) {
    throw ConfigError(path + ": " + std::to_string(values.size()) + " " + what + " values for " +
                      std::to_string(count) + " channels; give one for all or one for each");
  }
  return values;
}

// Scale and offset applied over a reader's output: the per-channel scale by
// name, for every format, and the positional scale and offset for text.
class CalibratedSource final : public SampleSource {
 public:
  CalibratedSource(std::unique_ptr<SampleSource> inner, const RecordingOptions& options, bool positional)
      : inner_(std::move(inner)) {
    const auto& names = inner_->channel_names();
    scale_ = positional ? expand(options.scale, names.size(), 1.0, "scale", inner_->origin())
                        : std::vector<double>(names.size(), 1.0);
    offset_ = positional ? expand(options.offset, names.size(), 0.0, "offset", inner_->origin())
                         : std::vector<double>(names.size(), 0.0);
    for (const auto& [name, factor] : options.named_scale) {
      const auto it = std::find(names.begin(), names.end(), name);
      if (it == names.end()) {
        std::string message = inner_->origin() + ": a scale is given for channel '" + name + "' (--scale or probe_scale), which the file does not have (channels:";
        for (const auto& n : names) message += " '" + n + "'";
        throw ConfigError(message + ")");
      }
      const auto c = static_cast<std::size_t>(it - names.begin());
      scale_[c] *= factor;
      offset_[c] *= factor;
      std::ostringstream factor_text;
      factor_text << factor;
      scaled_ += (scaled_.empty() ? "" : ", ") + ("'" + name + "' multiplied by " + factor_text.str());
    }
  }

  const std::vector<std::string>& channel_names() const override { return inner_->channel_names(); }
  std::vector<std::string> channel_units() const override { return inner_->channel_units(); }
  const std::string& origin() const override { return inner_->origin(); }
  // The factors given by name are part of how the recording was read: they
  // change every result, so the recording line and the JSON carry them.
  SourceSummary summary() const override {
    SourceSummary summary = inner_->summary();
    if (!scaled_.empty()) summary.layout += (summary.layout.empty() ? "" : "; ") + scaled_;
    return summary;
  }
  bool next(SampleBlock& block) override {
    if (!inner_->next(block)) return false;
    for (std::size_t c = 0; c < block.channels.size(); ++c) {
      if (scale_[c] == 1.0 && offset_[c] == 0.0) continue;
      for (double& v : block.channels[c]) v = v * scale_[c] + offset_[c];
    }
    return true;
  }

 private:
  std::unique_ptr<SampleSource> inner_;
  std::vector<double> scale_;
  std::vector<double> offset_;
  std::string scaled_;  // "'y' multiplied by -10", for the summary
};

// A pipe, a terminal or a socket: it is read as it comes, once, and says so.
class OnePassSource final : public SampleSource {
 public:
  OnePassSource(std::unique_ptr<SampleSource> inner, std::string kind)
      : inner_(std::move(inner)), kind_(std::move(kind)) {}
  const std::vector<std::string>& channel_names() const override { return inner_->channel_names(); }
  std::vector<std::string> channel_units() const override { return inner_->channel_units(); }
  const std::string& origin() const override { return inner_->origin(); }
  SourceSummary summary() const override { return inner_->summary(); }
  bool next(SampleBlock& block) override { return inner_->next(block); }
  std::string one_pass_kind() const override { return kind_; }

 private:
  std::unique_ptr<SampleSource> inner_;
  std::string kind_;
};

// What a path is when it cannot be opened again at its start; empty for a
// file (or a path that does not exist: the reader says so).
std::string one_pass_kind(const std::string& path) {
  std::error_code ec;
  const auto status = std::filesystem::status(path, ec);
  if (ec) return {};
  if (std::filesystem::is_fifo(status)) return "a pipe";
  if (std::filesystem::is_character_file(status)) return "a character device (a terminal or a stream)";
  if (std::filesystem::is_socket(status)) return "a socket";
  return {};
}

std::unique_ptr<SampleSource> open_format(const std::string& path, const RecordingOptions& options) {
  const RecordingFormat format = options.format == RecordingFormat::kAuto ? format_from_extension(path) : options.format;
  switch (format) {
    case RecordingFormat::kRaw: return detail::open_raw(path, options);
    case RecordingFormat::kWav: return detail::open_wav(path, options);
    case RecordingFormat::kHdf5: return detail::open_hdf5(path, options);
    case RecordingFormat::kAuto:
    case RecordingFormat::kText: {
      DelimitedOptions text = options.text;
      if (options.sample_rate_hz) text.sample_rate_hz = options.sample_rate_hz;
      text.block_size = options.block_size;
      text.unused_channel_names = options.channel_names;
      auto source = open_delimited(path, text);
      if (options.scale.empty() && options.offset.empty() && options.named_scale.empty()) return source;
      return std::make_unique<CalibratedSource>(std::move(source), options, true);
    }
  }
  return nullptr;
}

}  // namespace

RecordingFormat format_from_name(const std::string& name) { return value_of(kFormatNames, name, {"format"}); }

SampleType sample_type_from_name(const std::string& name) { return value_of(kSampleTypeNames, name, {"sample type"}); }

std::size_t sample_type_bytes(SampleType type) {
  switch (type) {
    case SampleType::kInt16: return 2;
    case SampleType::kInt32: return 4;
    case SampleType::kFloat32: return 4;
    case SampleType::kFloat64: return 8;
  }
  return 0;
}

std::vector<std::string> default_channel_names(std::size_t count) {
  // Two channels hold the loop signals x and y (the injection then is x - y,
  // --z x-y); three or more start with the injection z.
  if (count == 2) return {"x", "y"};
  std::vector<std::string> names;
  for (std::size_t i = 0; i < count; ++i) {
    names.push_back(i < 3 ? std::string(1, "zxy"[i]) : "ch" + std::to_string(i + 1));
  }
  return names;
}

namespace detail {

void ChannelSetup::calibrate(std::size_t c, std::vector<double>& samples) const {
  if (scale[c] == 1.0 && offset[c] == 0.0) return;
  for (double& v : samples) v = v * scale[c] + offset[c];
}

ChannelSetup channel_setup(const RecordingOptions& options, std::size_t count, const std::string& path) {
  if (count > kMaxChannels) {
    throw InputError(path + ": " + std::to_string(count) + " channels; a recording may have at most " +
                     std::to_string(kMaxChannels));
  }
  ChannelSetup setup;
  setup.names = default_channel_names(count);
  // Fewer names than channels would leave the rest to the default names,
  // which may silently give a role to the wrong channel.
  if (!options.channel_names.empty() && options.channel_names.size() != count) {
    throw ConfigError(path + ": " + std::to_string(options.channel_names.size()) +
                      " channel names given but the file has " + std::to_string(count) +
                      " channels (--channels, or channels under [input]); name every channel, in file order");
  }
  if (!options.channel_names.empty()) setup.names = options.channel_names;
  setup.scale = expand(options.scale, count, 1.0, "scale", path);
  setup.offset = expand(options.offset, count, 0.0, "offset", path);
  return setup;
}

}  // namespace detail

namespace {

// A role could only ever reach the first of two channels of one name; a
// raw file's frame is as wide as the names say, so their count is capped.
void check_channel_names(const std::vector<std::string>& names) {
  const std::string where = " (--channels, or channels under [input])";
  if (names.size() > kMaxChannels) {
    throw ConfigError(std::to_string(names.size()) + " channel names given" + where +
                      "; a recording may have at most " + std::to_string(kMaxChannels) + " channels");
  }
  std::map<std::string_view, std::size_t> seen;  // name -> its place, from 1
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (names[i].empty()) {
      throw ConfigError("channel name " + std::to_string(i + 1) + " of " + std::to_string(names.size()) + where +
                        " is empty; give every channel a name");
    }
    const auto [it, added] = seen.emplace(names[i], i + 1);
    if (added) continue;
    throw ConfigError("the channel name '" + names[i] + "' is given twice (names " + std::to_string(it->second) +
                      " and " + std::to_string(i + 1) + where + "); give each channel its own name");
  }
}

}  // namespace

void RecordingOptions::validate() const {
  if (sample_rate_hz && !plausible_sample_rate(*sample_rate_hz)) {
    throw setting_out_of_range("sample_rate_hz", *sample_rate_hz, std::string("a rate from ") + kSampleRateRangeText);
  }
  if (block_size < 1 || block_size > kMaxBlockSize) {
    throw setting_out_of_range("block_size", block_size, "1 to " + std::to_string(kMaxBlockSize) + " samples");
  }
  check_channel_names(channel_names);
  for (const double v : scale) {
    if (!std::isfinite(v)) throw setting_out_of_range("scale", v, "finite numbers");
  }
  for (const double v : offset) {
    if (!std::isfinite(v)) throw setting_out_of_range("offset", v, "finite numbers");
  }
  for (const auto& [name, v] : named_scale) {
    if (!std::isfinite(v) || v == 0.0) throw setting_out_of_range("scale of " + name, v, "a finite number other than 0");
  }
}

std::unique_ptr<SampleSource> open_recording(const std::string& path, const RecordingOptions& options) {
  options.validate();
  auto source = open_format(path, options);
  const bool text = dynamic_cast<CalibratedSource*>(source.get()) != nullptr;
  if (!text && !options.named_scale.empty()) {
    source = std::make_unique<CalibratedSource>(std::move(source), options, false);
  }
  if (auto kind = one_pass_kind(path); !kind.empty()) {
    source = std::make_unique<OnePassSource>(std::move(source), std::move(kind));
  }
  return source;
}

}  // namespace loopaudit
