// HDF5 recordings, structure-aware: the input describes a file (datasets
// with their names, types, shapes, storage, attributes and samples; the
// file's attributes; the settings the reader gets), the target writes that
// file with the HDF5 library and reads it with open_recording.
//
// Why not the file's bytes: mutated bytes reach the HDF5 library's own
// parser first, and it crashes on them (a null read in H5F__accum_read under
// H5Lvisit, huge allocations in H5C_protect, leaks), in code this project
// cannot change; those findings hid any of ours. A file the library wrote
// itself is one it parses, so every finding here is in our reader: what it
// makes of the layouts, types, shapes, attributes and settings a real file
// can hold. The seed corpus (tests/fuzz/corpus/hdf5/) holds descriptions of
// small files' structure, written by tests/fuzz/corpus/make_hdf5_seeds.py,
// which also documents the format. Besides the library's errors, a finding
// is any HDF5 object the reader leaves open.
//
// Description (every byte past the end reads as 0):
//   settings flags: bits 0-1 which datasets the settings name (0 none,
//     1 `dataset` = the first, 2 `datasets` = all, 3 both), bit 2 a sample
//     rate in the settings, bit 3 channel names (count in the next byte),
//     bit 4 rate attribute named "fs", bits 5-6 the channels needed minus 2
//   [channel name count, then that many indexes into kChannelNames]
//   block size index (kBlockSizes)
//   dataset count (mod 8), then per dataset: name index (kDatasetNames),
//     type index (kTypes), rank (mod 4), one byte a dimension (under 240: the
//     size; else 2^(16 + b - 240)), storage flags (bit 0 chunked, bit 1
//     samples written), attribute count (mod 4), attributes
//   file attribute count (mod 4), attributes
//   attribute: name index (kAttributeNames), type index (kTypes), element
//     count (0: a scalar), 8 bytes of value (little-endian; the bits of a
//     double for float types, an int64 for the others, bytes for strings)
//   the rest: sample bytes for the datasets whose samples are written, in
//     order, each taking its size in bytes (repeated when too few are left)
#include <hdf5.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"

namespace {

class Bytes {
 public:
  Bytes(const uint8_t* data, size_t size) : data_(data), size_(size) {}
  uint8_t next() { return at_ < size_ ? data_[at_++] : 0; }
  uint64_t next64() {
    uint64_t value = 0;
    for (int i = 0; i < 8; ++i) value |= static_cast<uint64_t>(next()) << (8 * i);
    return value;
  }
  // The bytes left, for samples (empty: zeros).
  const uint8_t* rest() const { return data_ + at_; }
  size_t rest_size() const { return size_ - std::min(at_, size_); }

 private:
  const uint8_t* data_;
  size_t size_;
  size_t at_ = 0;
};

constexpr std::array<const char*, 12> kDatasetNames{"samples", "acq/samples", "z", "x", "y", "ch/z",
                                                    "ch/x",    "ch/y",        "a/z", "b/z", "data", "f_set"};
constexpr std::array<const char*, 4> kAttributeNames{"sample_rate_hz", "fs", "units", "sample_rate"};
constexpr std::array<const char*, 5> kChannelNames{"z", "x", "y", "f_set", "ch4"};
constexpr std::array<size_t, 5> kBlockSizes{1, 7, 33, 4096, 65536};
constexpr size_t kMaxWrittenElements = size_t{1} << 15;
constexpr int kMaxBlocksRead = 8;  // a dataset of 2^31 rows of fill values is not read to its end

// The types a file may hold; the caller closes the returned copy.
hid_t make_type(uint8_t index) {
  switch (index % 12) {
    case 0: return H5Tcopy(H5T_IEEE_F64LE);
    case 1: return H5Tcopy(H5T_IEEE_F32LE);
    case 2: return H5Tcopy(H5T_STD_I16LE);
    case 3: return H5Tcopy(H5T_STD_I32LE);
    case 4: return H5Tcopy(H5T_STD_U8LE);
    case 5: return H5Tcopy(H5T_STD_I64LE);
    case 6: return H5Tcopy(H5T_STD_U64LE);
    case 7: return H5Tcopy(H5T_IEEE_F64BE);
    case 8: return H5Tcopy(H5T_STD_I16BE);
    case 9: {
      const hid_t text = H5Tcopy(H5T_C_S1);
      H5Tset_size(text, 8);
      return text;
    }
    case 10: {
      const hid_t pair = H5Tcreate(H5T_COMPOUND, 16);
      H5Tinsert(pair, "re", 0, H5T_IEEE_F64LE);
      H5Tinsert(pair, "im", 8, H5T_IEEE_F64LE);
      return pair;
    }
    default: return H5Tcopy(H5T_NATIVE_B8);
  }
}

uint64_t dimension(uint8_t b) { return b < 240 ? b : uint64_t{1} << (16 + b - 240); }

// `count` elements of `type` filled with `value` (a double's bits for
// floats, an int64 otherwise, raw bytes for the rest).
std::vector<unsigned char> filled(hid_t type, size_t count, uint64_t value) {
  const size_t width = H5Tget_size(type);
  std::vector<unsigned char> out(count * width);
  std::vector<unsigned char> one(std::max<size_t>(width, 8));
  if (H5Tget_class(type) == H5T_FLOAT) {
    double number;
    std::memcpy(&number, &value, 8);
    H5Tconvert(H5T_NATIVE_DOUBLE, type, 1, &number, nullptr, H5P_DEFAULT);
    std::memcpy(one.data(), &number, 8);
  } else if (H5Tget_class(type) == H5T_INTEGER) {
    int64_t number = static_cast<int64_t>(value);
    H5Tconvert(H5T_NATIVE_INT64, type, 1, &number, nullptr, H5P_DEFAULT);
    std::memcpy(one.data(), &number, 8);
  } else {
    std::memcpy(one.data(), &value, 8);
  }
  for (size_t i = 0; i < count; ++i) std::memcpy(out.data() + i * width, one.data(), width);
  return out;
}

void add_attribute(hid_t object, Bytes& in) {
  const char* name = kAttributeNames[in.next() % kAttributeNames.size()];
  const hid_t type = make_type(in.next());
  const hsize_t count = in.next() % 5;
  const uint64_t value = in.next64();
  const hid_t space = count == 0 ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &count, nullptr);
  if (H5Aexists(object, name) <= 0) {
    const hid_t attribute = H5Acreate2(object, name, type, space, H5P_DEFAULT, H5P_DEFAULT);
    if (attribute >= 0) {
      const auto bytes = filled(type, count == 0 ? 1 : count, value);
      H5Awrite(attribute, type, bytes.data());
      H5Aclose(attribute);
    }
  }
  H5Sclose(space);
  H5Tclose(type);
}

// Samples for `bytes` bytes from the rest of the input, repeated as needed.
std::vector<unsigned char> samples(Bytes& in, size_t bytes, size_t& taken) {
  std::vector<unsigned char> out(bytes);
  const size_t have = in.rest_size() > taken ? in.rest_size() - taken : 0;
  for (size_t i = 0; i < bytes && have > 0; ++i) out[i] = in.rest()[taken + i % have];
  taken += std::min(bytes, have);
  return out;
}

struct Dataset {
  std::string name;
  int rank = 0;
};

void add_dataset(hid_t file, Bytes& in, std::vector<Dataset>& made, std::vector<std::pair<hid_t, size_t>>& to_write) {
  Dataset d{std::string("/") + kDatasetNames[in.next() % kDatasetNames.size()], 0};
  const hid_t type = make_type(in.next());
  d.rank = in.next() % 4;
  std::array<hsize_t, 3> dims{};
  size_t elements = 1;
  bool empty = false;
  for (int i = 0; i < d.rank; ++i) {
    dims[i] = dimension(in.next());
    empty = empty || dims[i] == 0;
    // Counted up to one past the most written (no overflow: both factors are at most that).
    const size_t factor = std::min<size_t>(dims[i], kMaxWrittenElements + 1);
    elements = std::min(elements * factor, kMaxWrittenElements + 1);
  }
  const uint8_t storage = in.next();
  const bool small = elements <= kMaxWrittenElements;
  const hid_t space = d.rank == 0 ? H5Screate(H5S_SCALAR) : H5Screate_simple(d.rank, dims.data(), nullptr);
  const hid_t create = H5Pcreate(H5P_DATASET_CREATE);
  if (d.rank > 0 && !empty && (!small || (storage & 1))) {
    std::array<hsize_t, 3> chunk{};
    for (int i = 0; i < d.rank; ++i) chunk[i] = std::min<hsize_t>(dims[i], 64);
    H5Pset_chunk(create, d.rank, chunk.data());
  }
  const hid_t lcpl = H5Pcreate(H5P_LINK_CREATE);
  H5Pset_create_intermediate_group(lcpl, 1);
  const hid_t dataset = H5Dcreate2(file, d.name.c_str(), type, space, lcpl, create, H5P_DEFAULT);
  const int attributes = in.next() % 4;
  if (dataset >= 0) {
    for (int i = 0; i < attributes; ++i) add_attribute(dataset, in);
    made.push_back(d);
    if (small && (storage & 2)) {
      to_write.emplace_back(dataset, elements);
    } else {
      H5Dclose(dataset);
    }
  }
  H5Pclose(lcpl);
  H5Pclose(create);
  H5Sclose(space);
  H5Tclose(type);
}

// Writes the file the description gives; returns the datasets made.
std::vector<Dataset> write_file(const std::string& path, Bytes& in) {
  std::vector<Dataset> made;
  const hid_t file = H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  if (file < 0) return made;
  std::vector<std::pair<hid_t, size_t>> to_write;
  const int datasets = in.next() % 8;
  for (int i = 0; i < datasets; ++i) add_dataset(file, in, made, to_write);
  const int attributes = in.next() % 4;
  for (int i = 0; i < attributes; ++i) add_attribute(file, in);
  size_t taken = 0;
  for (const auto& [dataset, elements] : to_write) {
    const hid_t type = H5Dget_type(dataset);
    const auto bytes = samples(in, elements * H5Tget_size(type), taken);
    H5Dwrite(dataset, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, bytes.data());
    H5Tclose(type);
    H5Dclose(dataset);
  }
  H5Fclose(file);
  return made;
}

// What the description says of the settings, read before the file.
struct Settings {
  uint8_t flags = 0;
  std::vector<std::string> channel_names;
  size_t block_size = 1;

  explicit Settings(Bytes& in) : flags(in.next()) {
    if (flags & 8) {
      const int names = in.next() % 6;
      for (int i = 0; i < names; ++i) channel_names.push_back(kChannelNames[in.next() % kChannelNames.size()]);
    }
    block_size = kBlockSizes[in.next() % kBlockSizes.size()];
  }

  loopaudit::RecordingOptions options(const std::vector<Dataset>& made) const {
    loopaudit::RecordingOptions options;
    options.format = loopaudit::RecordingFormat::kHdf5;
    if ((flags & 3) == 1 || (flags & 3) == 3) options.hdf5.dataset = made.empty() ? "/none" : made.front().name;
    if ((flags & 3) >= 2) {
      for (const auto& d : made) options.hdf5.datasets.push_back(d.name);
      if (made.empty()) options.hdf5.datasets.push_back("/none");
    }
    if (flags & 4) options.sample_rate_hz = 1000.0;
    if (flags & 16) options.hdf5.rate_attribute = "fs";
    options.hdf5.channels_needed = 2 + ((flags >> 5) & 3);
    options.channel_names = channel_names;
    options.block_size = block_size;
    return options;
  }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  Bytes in(data, size);
  const Settings settings(in);
  const std::string path = "/tmp/loopaudit_fuzz_" + std::to_string(::getpid()) + ".h5";
  const std::vector<Dataset> made = write_file(path, in);
  try {
    const auto source = open_recording(path, settings.options(made));
    SampleBlock block;
    for (int i = 0; i < kMaxBlocksRead && source->next(block); ++i) {
    }
  } catch (const Error&) {
  }
  const ssize_t open = H5Fget_obj_count(H5F_OBJ_ALL, H5F_OBJ_ALL);
  if (open != 0) {
    std::fprintf(stderr, "the reader left %zd HDF5 objects open\n", open);
    std::abort();
  }
  return 0;
}
