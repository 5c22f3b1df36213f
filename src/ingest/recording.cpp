#include "loopaudit/ingest/recording.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"

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
  if (sample_rate_hz && !(*sample_rate_hz > 0.0 && std::isfinite(*sample_rate_hz))) {
    throw setting_out_of_range("sample_rate_hz", *sample_rate_hz, "a positive rate in Hz");
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
}

std::unique_ptr<SampleSource> open_recording(const std::string& path, const RecordingOptions& options) {
  options.validate();
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
      return open_delimited(path, text);
    }
  }
  return nullptr;
}

}  // namespace loopaudit
