#include <sndfile.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <optional>
#include <sstream>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// Where a RIFF (or RF64) WAVE file's samples are, as its chunks state it.
struct DataChunk {
  std::uint64_t offset = 0;        // of the first sample byte
  std::uint64_t stated_bytes = 0;  // the data chunk's length (RF64: from the ds64 chunk)
  std::uint64_t frame_bytes = 0;   // the format chunk's block align; 0 when none came before the data
};

// An unsigned number of `count` bytes, little-endian (RIFF, RF64) or big (RIFX).
std::uint64_t unsigned_at(const unsigned char* bytes, int count, bool big) {
  std::uint64_t value = 0;
  for (int i = 0; i < count; ++i) value |= std::uint64_t{bytes[big ? count - 1 - i : i]} << (8 * i);
  return value;
}

// Walks the chunks up to the data chunk. libsndfile reads what is there of
// a data chunk that states more bytes than the file holds, and the whole
// frames of one that ends inside a frame, without saying so; this is how
// such a file is told from a whole one. nullopt for other containers.
std::optional<DataChunk> wave_data_chunk(const std::string& path, std::uint64_t file_bytes) {
  std::ifstream in(path, std::ios::binary);
  unsigned char head[12];
  if (!in.read(reinterpret_cast<char*>(head), sizeof head) || std::memcmp(head + 8, "WAVE", 4) != 0) {
    return std::nullopt;
  }
  const bool rf64 = std::memcmp(head, "RF64", 4) == 0;
  const bool big = std::memcmp(head, "RIFX", 4) == 0;
  if (!rf64 && !big && std::memcmp(head, "RIFF", 4) != 0) return std::nullopt;
  DataChunk chunk;
  std::uint64_t rf64_data_bytes = 0;
  constexpr int kMaxChunks = 4096;  // of metadata before the samples; a file with more is not checked
  std::uint64_t at = 12;
  for (int chunks = 0; chunks < kMaxChunks && at + 8 <= file_bytes; ++chunks) {
    unsigned char header[8];
    unsigned char body[24] = {};
    in.seekg(static_cast<std::streamoff>(at));
    if (!in.read(reinterpret_cast<char*>(header), sizeof header)) return std::nullopt;
    const std::uint64_t size = unsigned_at(header + 4, 4, big);
    in.read(reinterpret_cast<char*>(body), sizeof body);
    in.clear();
    if (std::memcmp(header, "ds64", 4) == 0) rf64_data_bytes = unsigned_at(body + 8, 8, big);
    if (std::memcmp(header, "fmt ", 4) == 0) chunk.frame_bytes = unsigned_at(body + 12, 2, big);
    if (std::memcmp(header, "data", 4) == 0) {
      chunk.offset = at + 8;
      chunk.stated_bytes = rf64 && size == 0xFFFFFFFFu ? rf64_data_bytes : size;
      return chunk;
    }
    at += 8 + size + (size & 1);
  }
  return std::nullopt;
}

// A data chunk that states more than the file holds (a file cut short while
// being written or copied), or that ends inside a frame.
void check_data_chunk(const std::string& path, std::size_t frames, Diagnostics& findings) {
  std::error_code ec;
  const std::uint64_t file_bytes = std::filesystem::file_size(path, ec);
  if (ec) return;  // a pipe: libsndfile read it, its length is not known
  const auto chunk = wave_data_chunk(path, file_bytes);
  if (!chunk || chunk->offset > file_bytes) return;
  const std::uint64_t present = file_bytes - chunk->offset;
  const std::uint64_t used = std::min(present, chunk->stated_bytes);
  const std::uint64_t partial = chunk->frame_bytes > 0 ? used % chunk->frame_bytes : 0;
  std::ostringstream message;
  if (chunk->stated_bytes > present) {
    message << "the data chunk states " << chunk->stated_bytes << " bytes of samples but the file ends " << present
            << " bytes after their start: it was cut short (or its writer never finished it); the " << frames
            << " whole frames there are analysed";
    if (partial > 0) message << ", and the " << partial << " bytes of an incomplete frame after them ignored";
    findings.push_back(make_warning("ingest.truncated", message.str(), {.first_sample = frames}));
  } else if (partial > 0) {
    message << "the data ends with " << partial << " bytes of an incomplete frame (" << chunk->frame_bytes
            << " bytes a frame); they are ignored: was the file cut short?";
    findings.push_back(make_warning("ingest.partial-frame", message.str(), {.first_sample = frames}));
  }
}

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
    const int major = info.format & SF_FORMAT_TYPEMASK;
    if (major == SF_FORMAT_WAV || major == SF_FORMAT_WAVEX || major == SF_FORMAT_RF64) {
      check_data_chunk(path, static_cast<std::size_t>(info.frames), findings_);
    }
  }

  const std::vector<std::string>& channel_names() const override { return setup_.names; }
  const std::string& origin() const override { return path_; }
  SourceSummary summary() const override { return {sample_rate_hz_, frames_read_, findings_}; }

  bool next(SampleBlock& block) override {
    const std::size_t channels = setup_.names.size();
    const std::size_t rows = rows_per_block(options_.block_size, channels);
    interleaved_.resize(rows * channels);
    const sf_count_t got = sf_readf_double(file_.get(), interleaved_.data(), static_cast<sf_count_t>(rows));
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
