#include <hdf5.h>

#include <cmath>
#include <optional>
#include <sstream>

#include "ingest/channel_setup.hpp"
#include "ingest/readers.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// An HDF5 identifier closed by its own function when it goes out of scope.
class Handle {
 public:
  Handle() = default;
  Handle(hid_t id, herr_t (*close)(hid_t)) : id_(id), close_(close) {}
  ~Handle() {
    if (id_ >= 0 && close_ != nullptr) close_(id_);
  }
  Handle(Handle&& other) noexcept : id_(other.id_), close_(other.close_) { other.id_ = -1; }
  Handle& operator=(Handle&& other) noexcept {
    std::swap(id_, other.id_);
    std::swap(close_, other.close_);
    return *this;
  }
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }

 private:
  hid_t id_ = -1;
  herr_t (*close_)(hid_t) = nullptr;
};

// A scalar numeric attribute's value; nullopt when there is no such
// attribute. Anything else under that name (an array, a string, a value that
// is not a positive finite number) is refused naming the attribute and what
// it holds: reading an array into one double would overrun it.
std::optional<double> number_attribute(hid_t object, const std::string& name, const std::string& where) {
  if (name.empty() || H5Aexists(object, name.c_str()) <= 0) return std::nullopt;
  Handle attribute(H5Aopen(object, name.c_str(), H5P_DEFAULT), H5Aclose);
  if (!attribute.valid()) return std::nullopt;
  Handle space(H5Aget_space(attribute.get()), H5Sclose);
  Handle type(H5Aget_type(attribute.get()), H5Tclose);
  const hssize_t points = space.valid() ? H5Sget_simple_extent_npoints(space.get()) : -1;
  const H5T_class_t kind = type.valid() ? H5Tget_class(type.get()) : H5T_NO_CLASS;
  const bool numeric = kind == H5T_INTEGER || kind == H5T_FLOAT;
  if (!numeric || points != 1) {
    throw ConfigError(where + ": the attribute '" + name + "' must hold one number (the sample rate in Hz); it holds " +
                      (numeric ? std::to_string(points) + " numbers" : std::string("no number (a string or another type)")) +
                      "; give --sample-rate HZ, or name another attribute with rate_attribute under [input]");
  }
  double value = 0.0;
  if (H5Aread(attribute.get(), H5T_NATIVE_DOUBLE, &value) < 0) return std::nullopt;
  if (!(value > 0.0 && std::isfinite(value))) {
    std::ostringstream message;
    message << where << ": the attribute '" << name << "' holds " << value
            << ", not a sample rate (a positive number of Hz); give --sample-rate HZ";
    throw ConfigError(message.str());
  }
  return value;
}

std::vector<hsize_t> dimensions(hid_t dataset) {
  Handle space(H5Dget_space(dataset), H5Sclose);
  const int rank = H5Sget_simple_extent_ndims(space.get());
  std::vector<hsize_t> dims(rank > 0 ? static_cast<std::size_t>(rank) : 0);
  if (rank > 0) H5Sget_simple_extent_dims(space.get(), dims.data(), nullptr);
  return dims;
}

std::string last_component(const std::string& path) {
  const auto slash = path.find_last_of('/');
  return slash == std::string::npos ? path : path.substr(slash + 1);
}

struct DatasetFound {
  std::string name;
  std::vector<hsize_t> dims;
};

herr_t collect_dataset(hid_t group, const char* name, const H5L_info_t* info, void* data) {
  if (info->type != H5L_TYPE_HARD) return 0;
  Handle dataset(H5Dopen2(group, name, H5P_DEFAULT), H5Dclose);  // fails quietly for a group
  if (!dataset.valid()) return 0;
  std::string path(1, '/');
  path.append(name);
  static_cast<std::vector<DatasetFound>*>(data)->push_back({std::move(path), dimensions(dataset.get())});
  return 0;
}

std::string shape_text(const std::vector<hsize_t>& dims) {
  std::string text = std::to_string(dims.size()) + "-D";
  for (std::size_t i = 0; i < dims.size(); ++i) text += (i == 0 ? ", " : " x ") + std::to_string(dims[i]);
  return text;
}

std::string datasets_listed(hid_t file) {
  std::vector<DatasetFound> found;
  H5Lvisit(file, H5_INDEX_NAME, H5_ITER_INC, collect_dataset, &found);
  std::string text;
  for (const auto& d : found) text += " '" + d.name + "' (" + shape_text(d.dims) + ")";
  return found.empty() ? " no dataset" : text;
}

// The datasets to read when the settings name none: the only 2-D dataset,
// or exactly `needed` 1-D datasets of equal length. Throws ConfigError
// listing what the file holds otherwise.
Hdf5Layout chosen_layout(hid_t file, const std::string& path, Hdf5Layout layout) {
  std::vector<DatasetFound> found;
  H5Lvisit(file, H5_INDEX_NAME, H5_ITER_INC, collect_dataset, &found);
  std::vector<std::string> matrices;
  std::vector<std::string> columns;
  bool equal_lengths = true;
  std::vector<hsize_t> column_dims;
  for (const auto& d : found) {
    if (d.dims.size() == 2) matrices.push_back(d.name);
    if (d.dims.size() != 1) continue;
    if (!columns.empty() && d.dims != column_dims) equal_lengths = false;
    column_dims = d.dims;
    columns.push_back(d.name);
  }
  if (matrices.size() == 1) {
    layout.dataset = matrices.front();
    return layout;
  }
  if (matrices.empty() && equal_lengths && columns.size() == layout.channels_needed) {
    layout.datasets = columns;
    return layout;
  }
  std::ostringstream message;
  message << path << ": cannot tell which datasets hold the recording (" << layout.channels_needed
          << " channels needed); the file holds" << datasets_listed(file);
  message << ". Name one 2-D dataset with dataset = \"/path\", or one 1-D dataset per channel with datasets = "
             "[\"/a\", \"/b\", \"/c\"], under [input] in a settings file (--config FILE)";
  throw ConfigError(message.str());
}

// One 2-D dataset (the smaller dimension is the channels) or one 1-D dataset
// per channel, read block by block through hyperslabs.
class Hdf5Reader final : public SampleSource {
 public:
  Hdf5Reader(const std::string& path, const RecordingOptions& options) : path_(path), options_(options) {
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);  // errors become messages, not prints
    if (H5Fis_hdf5(path.c_str()) <= 0) throw InputError(path + ": not a readable HDF5 file");
    file_ = Handle(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), H5Fclose);
    if (!file_.valid()) throw InputError(path + ": cannot open as HDF5");
    if (!options.hdf5.dataset.empty() && !options.hdf5.datasets.empty()) {
      throw ConfigError(path + ": name either one 2-D dataset (dataset) or one 1-D dataset per channel (datasets), not both");
    }
    if (options.hdf5.dataset.empty() && options.hdf5.datasets.empty()) {
      options_.hdf5 = chosen_layout(file_.get(), path, options.hdf5);
      layout_ = "dataset";
      if (!options_.hdf5.datasets.empty()) layout_ += "s";
      for (const auto& name : options_.hdf5.datasets) layout_ += " '" + name + "'";
      if (!options_.hdf5.dataset.empty()) layout_ += " '" + options_.hdf5.dataset + "'";
      layout_ += " (the file's only candidate)";
    }
    const auto& layout = options_.hdf5;
    if (!layout.dataset.empty()) {
      open_matrix(layout.dataset);
    } else {
      open_columns(layout.datasets);
    }
    find_sample_rate();
  }

  const std::vector<std::string>& channel_names() const override { return setup_.names; }
  const std::string& origin() const override { return path_; }
  SourceSummary summary() const override { return {sample_rate_hz_, read_, {}, layout_}; }
  bool next(SampleBlock& block) override;

 private:
  Handle open_dataset(const std::string& name) const {
    Handle d(H5Dopen2(file_.get(), name.c_str(), H5P_DEFAULT), H5Dclose);
    if (!d.valid()) throw InputError(path_ + ": no dataset '" + name + "'; the file holds" + datasets_listed(file_.get()));
    return d;
  }
  void open_matrix(const std::string& name);
  void open_columns(const std::vector<std::string>& names);
  void find_sample_rate();
  void read_slab(hid_t dataset, std::vector<hsize_t> offset, std::vector<hsize_t> count, double* out) const;

  std::string path_;
  RecordingOptions options_;
  Handle file_;
  std::vector<Handle> datasets_;
  bool channels_first_ = false;  // a 2-D dataset stored channels x samples
  std::size_t length_ = 0;
  std::size_t read_ = 0;
  double sample_rate_hz_ = 0.0;
  std::string layout_;  // the datasets read, when the settings named none
  ChannelSetup setup_;
  std::vector<double> buffer_;
};

void Hdf5Reader::open_matrix(const std::string& name) {
  datasets_.push_back(open_dataset(name));
  const auto dims = dimensions(datasets_.back().get());
  if (dims.size() != 2 || dims[0] == 0 || dims[1] == 0) {
    throw InputError(path_ + ": dataset '" + name + "' is not a non-empty 2-D array (samples x channels)");
  }
  channels_first_ = dims[0] < dims[1];
  length_ = channels_first_ ? dims[1] : dims[0];
  setup_ = channel_setup(options_, channels_first_ ? dims[0] : dims[1], path_);
}

void Hdf5Reader::open_columns(const std::vector<std::string>& names) {
  if (names.size() > kMaxChannels) {
    throw ConfigError(path_ + ": " + std::to_string(names.size()) +
                      " datasets named (datasets under [input]); a recording may have at most " +
                      std::to_string(kMaxChannels) + " channels");
  }
  for (const auto& name : names) {
    datasets_.push_back(open_dataset(name));
    const auto dims = dimensions(datasets_.back().get());
    if (dims.size() != 1) throw InputError(path_ + ": dataset '" + name + "' is not 1-D");
    if (datasets_.size() > 1 && dims[0] != length_) {
      throw InputError(path_ + ": dataset '" + name + "' has " + std::to_string(dims[0]) + " samples, '" + names[0] +
                       "' has " + std::to_string(length_));
    }
    length_ = dims[0];
  }
  if (length_ == 0) throw InputError(path_ + ": the datasets are empty");
  RecordingOptions named = options_;
  if (named.channel_names.empty()) {
    for (const auto& name : names) {
      const std::string channel = last_component(name);
      for (std::size_t j = 0; j < named.channel_names.size(); ++j) {
        if (named.channel_names[j] != channel) continue;
        throw ConfigError(
            path_ + ": datasets '" + names[j] + "' and '" + name + "' would both be channel '" + channel +
            "' (the last part of their paths); name the channels with --channels (or channels under [input])");
      }
      named.channel_names.push_back(channel);
    }
  }
  setup_ = channel_setup(named, names.size(), path_);
}

void Hdf5Reader::find_sample_rate() {
  std::optional<double> rate = options_.sample_rate_hz;
  for (const auto& d : datasets_) {
    if (!rate) rate = number_attribute(d.get(), options_.hdf5.rate_attribute, path_);
  }
  if (!rate) rate = number_attribute(file_.get(), options_.hdf5.rate_attribute, path_);
  if (!rate || !(*rate > 0.0)) {
    throw ConfigError(path_ + ": no sample rate: no attribute '" + options_.hdf5.rate_attribute +
                      "' on the dataset or the file; give --sample-rate HZ (or sample_rate_hz under [input] in a "
                      "settings file), or name the attribute that holds it with rate_attribute under [input]");
  }
  sample_rate_hz_ = *rate;
}

void Hdf5Reader::read_slab(hid_t dataset, std::vector<hsize_t> offset, std::vector<hsize_t> count, double* out) const {
  Handle file_space(H5Dget_space(dataset), H5Sclose);
  Handle memory_space(H5Screate_simple(static_cast<int>(count.size()), count.data(), nullptr), H5Sclose);
  if (H5Sselect_hyperslab(file_space.get(), H5S_SELECT_SET, offset.data(), nullptr, count.data(), nullptr) < 0 ||
      H5Dread(dataset, H5T_NATIVE_DOUBLE, memory_space.get(), file_space.get(), H5P_DEFAULT, out) < 0) {
    throw InputError(path_ + ": read failed at sample " + std::to_string(read_) + " (is the dataset numeric?)");
  }
}

bool Hdf5Reader::next(SampleBlock& block) {
  const std::size_t channels = setup_.names.size();
  const std::size_t n = std::min(rows_per_block(options_.block_size, channels), length_ - read_);
  if (n == 0) return false;
  block.first_sample = read_;
  block.channels.resize(channels);
  if (datasets_.size() == 1 && options_.hdf5.datasets.empty()) {
    buffer_.resize(n * channels);
    if (channels_first_) {
      read_slab(datasets_[0].get(), {0, read_}, {channels, n}, buffer_.data());
    } else {
      read_slab(datasets_[0].get(), {read_, 0}, {n, channels}, buffer_.data());
    }
    for (std::size_t c = 0; c < channels; ++c) {
      block.channels[c].resize(n);
      for (std::size_t i = 0; i < n; ++i) block.channels[c][i] = channels_first_ ? buffer_[c * n + i] : buffer_[i * channels + c];
    }
  } else {
    for (std::size_t c = 0; c < channels; ++c) {
      block.channels[c].resize(n);
      read_slab(datasets_[c].get(), {read_}, {n}, block.channels[c].data());
    }
  }
  for (std::size_t c = 0; c < channels; ++c) setup_.calibrate(c, block.channels[c]);
  read_ += n;
  return true;
}

}  // namespace

std::unique_ptr<SampleSource> open_hdf5(const std::string& path, const RecordingOptions& options) {
  return std::make_unique<Hdf5Reader>(path, options);
}

}  // namespace loopaudit::detail
