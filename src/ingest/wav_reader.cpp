#include <sndfile.h>

#include <cmath>
#include <sstream>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// WAV (and the other formats libsndfile reads). Integer samples are read as
// fractions of full scale (-1 to 1), float samples as stored; scale and
// offset then convert to the loop's units.
class WavReader final : public SampleSource {
 public:
  WavReader(const std::string& path, const RecordingOptions& options) : path_(path), options_(options) {
    SF_INFO info{};
    file_.reset(sf_open(path.c_str(), SFM_READ, &info));
    if (!file_) throw InputError(path + ": not a readable sound file: " + sf_strerror(nullptr));
    if (info.channels < 1 || info.samplerate < 1) throw InputError(path + ": the file states no channels or no sample rate");
    setup_ = channel_setup(options, static_cast<std::size_t>(info.channels), path);
    sample_rate_hz_ = options.sample_rate_hz.value_or(static_cast<double>(info.samplerate));
    if (options.sample_rate_hz && std::abs(*options.sample_rate_hz / info.samplerate - 1.0) > 1e-3) {
      std::ostringstream message;
      message << "the stated sample rate " << *options.sample_rate_hz << " Hz is used; the file says " << info.samplerate
              << " Hz. Every frequency scales by their ratio: leave out --sample-rate unless the file's rate is wrong";
      findings_.push_back(make_warning("ingest.rate-disagrees", message.str()));
    }
  }

  const std::vector<std::string>& channel_names() const override { return setup_.names; }
  const std::string& origin() const override { return path_; }
  SourceSummary summary() const override { return {sample_rate_hz_, frames_read_, findings_}; }

  bool next(SampleBlock& block) override {
    const std::size_t channels = setup_.names.size();
    interleaved_.resize(options_.block_size * channels);
    const sf_count_t got = sf_readf_double(file_.get(), interleaved_.data(), static_cast<sf_count_t>(options_.block_size));
    if (sf_error(file_.get()) != SF_ERR_NO_ERROR) {
      throw InputError(path_ + ": read failed after " + std::to_string(frames_read_) + " frames: " + sf_strerror(file_.get()));
    }
    if (got <= 0) return false;
    const auto frames = static_cast<std::size_t>(got);
    block.first_sample = frames_read_;
    block.channels.resize(channels);
    for (std::size_t c = 0; c < channels; ++c) {
      auto& out = block.channels[c];
      out.resize(frames);
      for (std::size_t i = 0; i < frames; ++i) out[i] = interleaved_[i * channels + c];
      setup_.calibrate(c, out);
    }
    frames_read_ += frames;
    return true;
  }

 private:
  struct Closer {
    void operator()(SNDFILE* f) const { sf_close(f); }
  };
  std::string path_;
  RecordingOptions options_;
  std::unique_ptr<SNDFILE, Closer> file_;
  ChannelSetup setup_;
  double sample_rate_hz_ = 0.0;
  std::size_t frames_read_ = 0;
  Diagnostics findings_;
  std::vector<double> interleaved_;
};

}  // namespace

std::unique_ptr<SampleSource> open_wav(const std::string& path, const RecordingOptions& options) {
  return std::make_unique<WavReader>(path, options);
}

}  // namespace loopaudit::detail
