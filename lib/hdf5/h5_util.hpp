// Small helpers over the HDF5 C++ API: typed attributes and extendible, chunked, compressed
// datasets that grow by appending rows.
#pragma once

#include <H5Cpp.h>

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace pulsewise::detail::h5 {

// Turns off HDF5's automatic error printing: every failure surfaces as an exception that we
// turn into a message naming the file.
void silence_hdf5_errors();

// The text of an HDF5 exception, with the innermost library message when there is one.
std::string message_of(const H5::Exception& error);

H5::StrType utf8_string_type();

// Attribute writers replace an attribute of the same name.
void write_attribute(H5::H5Object& object, const std::string& name, const std::string& value);
void write_attribute(H5::H5Object& object, const std::string& name, const char* value);
void write_attribute(H5::H5Object& object, const std::string& name, double value);
void write_attribute(H5::H5Object& object, const std::string& name, std::int64_t value);
void write_attribute(H5::H5Object& object, const std::string& name, std::int32_t value);
void write_attribute(H5::H5Object& object, const std::string& name, std::int8_t value);
void write_attribute(H5::H5Object& object, const std::string& name,
                     const std::vector<double>& values, std::size_t columns = 0);
void write_attribute(H5::H5Object& object, const std::string& name,
                     const std::vector<std::string>& values);

// Attribute readers return nullopt when the attribute is absent and throw H5::Exception when it
// cannot be read as the asked type.
std::optional<std::string> read_string_attribute(const H5::H5Object& object,
                                                 const std::string& name);
std::optional<double> read_double_attribute(const H5::H5Object& object, const std::string& name);
std::optional<std::int64_t> read_int_attribute(const H5::H5Object& object, const std::string& name);
// Values in row-major order; columns receives the second dimension (1 for 1-D).
std::optional<std::vector<double>> read_double_array_attribute(const H5::H5Object& object,
                                                               const std::string& name,
                                                               std::size_t* columns = nullptr);
std::optional<std::vector<std::string>> read_string_array_attribute(const H5::H5Object& object,
                                                                    const std::string& name);

// A fixed list of strings as a 1-D dataset of variable-length UTF-8 strings.
void write_string_dataset(H5::Group& group, const std::string& name,
                          const std::vector<std::string>& values);
std::vector<std::string> read_string_dataset(const H5::DataSet& dataset, std::size_t first = 0,
                                             std::size_t count = SIZE_MAX);

struct ChunkSettings {
  std::size_t chunk_bytes = 128 * 1024;  // target size of one chunk before compression
  int deflate_level = 1;                 // 0: no compression
  // Rows the dataset is expected to grow by between two flushes. A chunk holds no more (but at
  // least kMinChunkRows): each flush recompresses the partly filled last chunk, and a chunk much
  // larger than what a flush adds would be recompressed many times over.
  std::size_t rows_per_flush = SIZE_MAX;
  static constexpr std::size_t kMinChunkRows = 64;
};

// An extendible dataset of rows of `width` elements (1-D when width is 0), appended at the end.
class AppendDataset {
 public:
  AppendDataset() = default;
  AppendDataset(H5::Group& group, const std::string& name, const H5::DataType& file_type,
                std::size_t width, const ChunkSettings& chunks);
  // Writes `rows` rows from `data` (row-major, of `memory_type`) after the current end.
  void append(const void* data, std::size_t rows, const H5::DataType& memory_type);
  std::size_t rows() const { return rows_; }
  H5::DataSet& dataset() { return dataset_; }

 private:
  H5::DataSet dataset_;
  std::size_t width_ = 0;
  std::size_t rows_ = 0;
};

// Rows in a dataset (its first dimension).
std::size_t row_count(const H5::DataSet& dataset);
// Second dimension, 1 for a 1-D dataset.
std::size_t column_count(const H5::DataSet& dataset);

// Reads rows [first, first + count) of a 1-D or 2-D dataset into `out` (row-major).
void read_rows(const H5::DataSet& dataset, std::size_t first, std::size_t count,
               const H5::DataType& memory_type, void* out);

}  // namespace pulsewise::detail::h5
