// Opening a recording in any supported format, and the layouts of formats
// that do not describe themselves.
//
// Formats: delimited text (CSV, TSV, semicolon with decimal comma), raw
// binary, WAV (through libsndfile) and HDF5. Each is one SampleSource in its
// own file under src/ingest/; a new format is a new file and a line here.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "loopaudit/ingest/delimited.hpp"
#include "loopaudit/names.hpp"
#include "loopaudit/record/record.hpp"

namespace loopaudit {

enum class RecordingFormat { kAuto, kText, kRaw, kWav, kHdf5 };
inline constexpr NameTable<RecordingFormat, 5> kFormatNames{{{RecordingFormat::kAuto, "auto"},
                                                             {RecordingFormat::kText, "text"},
                                                             {RecordingFormat::kRaw, "raw"},
                                                             {RecordingFormat::kWav, "wav"},
                                                             {RecordingFormat::kHdf5, "hdf5"}}};
static_assert(one_to_one(kFormatNames));

// The names of kFormatNames ("auto": by the file's extension). Throws ConfigError.
RecordingFormat format_from_name(const std::string& name);

enum class SampleType { kInt16, kInt32, kFloat32, kFloat64 };
inline constexpr NameTable<SampleType, 4> kSampleTypeNames{{{SampleType::kInt16, "int16"},
                                                            {SampleType::kInt32, "int32"},
                                                            {SampleType::kFloat32, "float32"},
                                                            {SampleType::kFloat64, "float64"}}};
static_assert(one_to_one(kSampleTypeNames));
SampleType sample_type_from_name(const std::string& name);  // throws ConfigError
std::size_t sample_type_bytes(SampleType type);

// Interleaved binary samples after an optional header; value = raw * scale + offset.
struct RawLayout {
  std::optional<SampleType> sample_type;  // unset: int16, and the layout echoed says it was assumed
  bool big_endian = false;
  std::size_t header_bytes = 0;
};

struct Hdf5Layout {
  std::string dataset;                // one 2-D dataset (samples x channels, or channels x samples)
  std::vector<std::string> datasets;  // or one 1-D dataset per channel
  std::string rate_attribute = "sample_rate_hz";  // looked up on the dataset(s), then on the file
  // With neither named: the file's only 2-D dataset, or its 1-D datasets when
  // they are exactly this many, of equal length (in the order of their paths).
  std::size_t channels_needed = 3;
};

// The most channels a recording may have (raw, WAV, HDF5, and the columns
// of a text recording besides the time): per-channel buffers are taken before
// the first sample is read, so a wider file is refused (InputError; too many
// channel names, ConfigError).
inline constexpr std::size_t kMaxChannels = 1024;

struct RecordingOptions {
  RecordingFormat format = RecordingFormat::kAuto;  // auto: by file extension
  // Channel names in file order for formats without names (raw, WAV,
  // unlabelled HDF5); default z, x, y, then ch4, ch5, ... Given, they must be
  // as many as the file's channels (a raw file: they set the count), none
  // empty or repeated, at most kMaxChannels.
  std::vector<std::string> channel_names;
  std::optional<double> sample_rate_hz;  // required for raw; overrides what a file says
  std::vector<double> scale;             // per channel (one value: all channels); default 1
  std::vector<double> offset;            // per channel; default 0
  // Per channel by name, multiplying the scale above (probe attenuation, an
  // inverted probe); for every format, text included.
  std::vector<std::pair<std::string, double>> named_scale;
  DelimitedOptions text;
  RawLayout raw;
  Hdf5Layout hdf5;
  std::size_t block_size = kMaxBlockSize;  // 1 to kMaxBlockSize

  // Throws ConfigError naming the setting that is out of range (called by
  // open_recording). What only a format needs (a raw file's sample rate, an
  // HDF5 file's datasets) its reader checks.
  void validate() const;
};

// Throws InputError when the file cannot be opened or does not match its
// format, ConfigError when the options do not fit the file. A pipe, a
// character device or a socket gives a source whose one_pass_kind() says so.
std::unique_ptr<SampleSource> open_recording(const std::string& path, const RecordingOptions& options);

// The names channels get when the file and the options give none.
std::vector<std::string> default_channel_names(std::size_t count);

}  // namespace loopaudit
