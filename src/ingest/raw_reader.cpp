#include <algorithm>
#include <cerrno>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <sstream>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

template <typename T>
T load(const unsigned char* bytes, bool swap) {
  unsigned char copy[sizeof(T)];
  std::memcpy(copy, bytes, sizeof(T));
  if (swap) std::reverse(copy, copy + sizeof(T));
  T value;
  std::memcpy(&value, copy, sizeof(T));
  return value;
}

// One channel of `frames` interleaved frames, converted to double.
template <typename T>
void unpack(const unsigned char* first, std::size_t frame_bytes, std::size_t frames, bool swap, double* out) {
  if (swap) {
    for (std::size_t i = 0; i < frames; ++i) out[i] = load<T>(first + i * frame_bytes, true);
    return;
  }
  for (std::size_t i = 0; i < frames; ++i) {
    T value;
    std::memcpy(&value, first + i * frame_bytes, sizeof(T));
    out[i] = static_cast<double>(value);
  }
}

void unpack_channel(SampleType type, const unsigned char* first, std::size_t frame_bytes, std::size_t frames, bool swap,
                    double* out) {
  switch (type) {
    case SampleType::kInt16: return unpack<std::int16_t>(first, frame_bytes, frames, swap, out);
    case SampleType::kInt32: return unpack<std::int32_t>(first, frame_bytes, frames, swap, out);
    case SampleType::kFloat32: return unpack<float>(first, frame_bytes, frames, swap, out);
    case SampleType::kFloat64: return unpack<double>(first, frame_bytes, frames, swap, out);
  }
}

bool host_is_big_endian() {
  const std::uint16_t probe = 1;
  unsigned char first;
  std::memcpy(&first, &probe, 1);
  return first == 0;
}

class RawReader final : public SampleSource {
 public:
  RawReader(const std::string& path, const RecordingOptions& options) : path_(path), options_(options) {
    if (!options.sample_rate_hz) {
      throw ConfigError(path + ": a raw binary recording needs its sample rate: give --sample-rate HZ "
                               "(or sample_rate_hz under [input] in a settings file)");
    }
    const std::size_t channels = options.channel_names.empty() ? 3 : options.channel_names.size();
    setup_ = channel_setup(options, channels, path);
    frame_bytes_ = channels * sample_type_bytes(type_);
    open_and_check();
    describe_layout();
  }

  const std::vector<std::string>& channel_names() const override { return setup_.names; }
  const std::string& origin() const override { return path_; }
  bool next(SampleBlock& block) override;
  SourceSummary summary() const override { return summary_; }

 private:
  void open_and_check();
  void describe_layout();

  std::string path_;
  RecordingOptions options_;
  SampleType type_ = options_.raw.sample_type.value_or(SampleType::kInt16);
  ChannelSetup setup_;
  std::size_t frame_bytes_ = 0;
  std::size_t frames_total_ = 0;
  std::size_t frames_read_ = 0;
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> file_{nullptr, &std::fclose};
  std::vector<unsigned char> buffer_;
  SourceSummary summary_;
};

void RawReader::open_and_check() {
  std::error_code ec;
  const auto size = std::filesystem::file_size(path_, ec);
  if (ec) throw InputError(path_ + ": cannot open: " + ec.message());
  const std::size_t header = options_.raw.header_bytes;
  if (size <= header) {
    throw InputError(path_ + ": " + std::to_string(size) + " bytes, no data after the " + std::to_string(header) +
                     "-byte header");
  }
  frames_total_ = (size - header) / frame_bytes_;
  const std::size_t partial = (size - header) % frame_bytes_;
  if (frames_total_ == 0) throw InputError(path_ + ": shorter than one frame of " + std::to_string(frame_bytes_) + " bytes");
  if (partial != 0) {
    std::ostringstream message;
    message << "the file ends with " << partial << " bytes of an incomplete frame (" << frame_bytes_
            << " bytes a frame); they are ignored: is the layout right, or was the file cut short?";
    summary_.findings.push_back(make_warning("ingest.partial-frame", message.str(), {.first_sample = frames_total_}));
  }
  file_.reset(std::fopen(path_.c_str(), "rb"));
  if (!file_) throw InputError(path_ + ": cannot open: " + std::strerror(errno));
  if (std::fseek(file_.get(), static_cast<long>(header), SEEK_SET) != 0) throw InputError(path_ + ": cannot skip the header");
}

// The layout used, echoed in the recording line of the report, and a note
// when the sample type was not given.
void RawReader::describe_layout() {
  std::ostringstream text;
  text << name_of(kSampleTypeNames, type_) << (options_.raw.sample_type ? "" : " (assumed)") << ", "
       << (options_.raw.big_endian ? "big" : "little") << "-endian, " << setup_.names.size() << " channels interleaved";
  if (options_.raw.header_bytes > 0) text << " after a " << options_.raw.header_bytes << "-byte header";
  summary_.layout = text.str();
  if (options_.raw.sample_type) return;
  summary_.findings.push_back(make_note(
      "ingest.sample-type-assumed",
      "no sample type given: the file is read as int16; if it holds int32, float32 or float64, give --sample-type "
      "NAME (or sample_type under [input] in a settings file)"));
}

bool RawReader::next(SampleBlock& block) {
  const std::size_t frames =
      std::min(rows_per_block(options_.block_size, setup_.names.size()), frames_total_ - frames_read_);
  if (frames == 0) {
    summary_.sample_rate_hz = *options_.sample_rate_hz;
    summary_.sample_count = frames_read_;
    return false;
  }
  buffer_.resize(frames * frame_bytes_);
  if (std::fread(buffer_.data(), frame_bytes_, frames, file_.get()) != frames) {
    throw InputError(path_ + ": read failed after " + std::to_string(frames_read_) + " frames");
  }
  const std::size_t channels = setup_.names.size();
  const std::size_t width = sample_type_bytes(type_);
  const bool swap = options_.raw.big_endian != host_is_big_endian();
  block.first_sample = frames_read_;
  block.channels.resize(channels);
  for (std::size_t c = 0; c < channels; ++c) {
    auto& out = block.channels[c];
    out.resize(frames);
    unpack_channel(type_, buffer_.data() + c * width, frame_bytes_, frames, swap, out.data());
    setup_.calibrate(c, out);
  }
  frames_read_ += frames;
  return true;
}

}  // namespace

std::unique_ptr<SampleSource> open_raw(const std::string& path, const RecordingOptions& options) {
  return std::make_unique<RawReader>(path, options);
}

}  // namespace loopaudit::detail
