#include "loopaudit/ingest/recording.hpp"

#include <algorithm>
#include <sstream>
#include <cctype>
#include <cmath>
#include <filesystem>

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
  ChannelSetup setup;
  setup.names = default_channel_names(count);
  if (options.channel_names.size() > count) {
    throw ConfigError(path + ": " + std::to_string(options.channel_names.size()) + " channel names given but the file has " +
                      std::to_string(count) + " channels");
  }
  std::copy(options.channel_names.begin(), options.channel_names.end(), setup.names.begin());
  setup.scale = expand(options.scale, count, 1.0, "scale", path);
  setup.offset = expand(options.offset, count, 0.0, "offset", path);
  return setup;
}

}  // namespace detail

void RecordingOptions::validate() const {
  if (sample_rate_hz && !plausible_sample_rate(*sample_rate_hz)) {
    throw setting_out_of_range("sample_rate_hz", *sample_rate_hz, std::string("a rate from ") + kSampleRateRangeText);
  }
  if (block_size < 1 || block_size > kMaxBlockSize) {
    throw setting_out_of_range("block_size", block_size, "1 to " + std::to_string(kMaxBlockSize) + " samples");
  }
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
  if (text || options.named_scale.empty()) return source;
  return std::make_unique<CalibratedSource>(std::move(source), options, false);
}

}  // namespace loopaudit
