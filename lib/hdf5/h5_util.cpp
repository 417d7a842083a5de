#include "h5_util.hpp"

#include <algorithm>
#include <array>

namespace pulsewise::detail::h5 {

void silence_hdf5_errors() { H5::Exception::dontPrint(); }

namespace {

herr_t keep_innermost(unsigned n, const H5E_error2_t* entry, void* client) {
  if (n == 0 && entry != nullptr && entry->desc != nullptr) {
    *static_cast<std::string*>(client) = entry->desc;
  }
  return 0;
}

void remove_if_present(H5::H5Object& object, const std::string& name) {
  if (object.attrExists(name)) object.removeAttr(name);
}

H5::DataSpace vector_space(std::size_t rows, std::size_t columns) {
  if (rows == 0) return H5::DataSpace(H5S_NULL);
  if (columns == 0) {
    const hsize_t dims[1] = {rows};
    return H5::DataSpace(1, dims);
  }
  const hsize_t dims[2] = {rows / columns, columns};
  return H5::DataSpace(2, dims);
}

std::size_t element_count(const H5::DataSpace& space) {
  if (space.getSimpleExtentType() == H5S_NULL) return 0;
  return static_cast<std::size_t>(space.getSimpleExtentNpoints());
}

// Fixed-width strings as HDF5 stores them: `width` bytes each, padded with NULs.
void append_fixed_width(const std::vector<char>& buffer, std::size_t width, std::size_t count,
                        std::vector<std::string>& values) {
  for (std::size_t k = 0; k < count; ++k) {
    const char* begin = buffer.data() + k * width;
    values.emplace_back(begin, std::find(begin, begin + width, '\0'));
  }
}

template <class T>
std::optional<T> read_scalar(const H5::H5Object& object, const std::string& name,
                             const H5::PredType& type) {
  if (!object.attrExists(name)) return std::nullopt;
  H5::Attribute attr = object.openAttribute(name);
  const H5T_class_t type_class = attr.getTypeClass();
  if ((type_class != H5T_INTEGER && type_class != H5T_FLOAT) ||
      element_count(attr.getSpace()) != 1) {
    throw H5::AttributeIException(name, "attribute is not a single number");
  }
  T value{};
  attr.read(type, &value);
  return value;
}

template <class T>
void write_scalar(H5::H5Object& object, const std::string& name, const T& value,
                  const H5::PredType& type) {
  if (object.attrExists(name)) {
    // Rewriting in place keeps the object header the same size while the run goes on.
    H5::Attribute attr = object.openAttribute(name);
    if (attr.getTypeClass() == type.getClass() && element_count(attr.getSpace()) == 1) {
      attr.write(type, &value);
      return;
    }
    object.removeAttr(name);
  }
  H5::Attribute attr = object.createAttribute(name, type, H5::DataSpace(H5S_SCALAR));
  attr.write(type, &value);
}

}  // namespace

std::string message_of(const H5::Exception& error) {
  std::string innermost;
  H5Ewalk2(H5E_DEFAULT, H5E_WALK_UPWARD, &keep_innermost, &innermost);
  H5Eclear2(H5E_DEFAULT);
  std::string text = error.getDetailMsg();
  if (!innermost.empty() && innermost != text) text += " (" + innermost + ")";
  return text;
}

H5::StrType utf8_string_type() {
  H5::StrType type(H5::PredType::C_S1, H5T_VARIABLE);
  type.setCset(H5T_CSET_UTF8);
  return type;
}

void write_attribute(H5::H5Object& object, const std::string& name, const std::string& value) {
  remove_if_present(object, name);
  const H5::StrType type = utf8_string_type();
  H5::Attribute attr = object.createAttribute(name, type, H5::DataSpace(H5S_SCALAR));
  attr.write(type, value);
}

void write_attribute(H5::H5Object& object, const std::string& name, const char* value) {
  write_attribute(object, name, std::string(value));
}

void write_attribute(H5::H5Object& object, const std::string& name, double value) {
  write_scalar(object, name, value, H5::PredType::NATIVE_DOUBLE);
}

void write_attribute(H5::H5Object& object, const std::string& name, std::int64_t value) {
  write_scalar(object, name, value, H5::PredType::NATIVE_INT64);
}

void write_attribute(H5::H5Object& object, const std::string& name, std::int32_t value) {
  write_scalar(object, name, value, H5::PredType::NATIVE_INT32);
}

void write_attribute(H5::H5Object& object, const std::string& name, std::int8_t value) {
  write_scalar(object, name, value, H5::PredType::NATIVE_INT8);
}

void write_attribute(H5::H5Object& object, const std::string& name,
                     const std::vector<double>& values, std::size_t columns) {
  remove_if_present(object, name);
  H5::Attribute attr = object.createAttribute(name, H5::PredType::NATIVE_DOUBLE,
                                              vector_space(values.size(), columns));
  if (!values.empty()) attr.write(H5::PredType::NATIVE_DOUBLE, values.data());
}

void write_attribute(H5::H5Object& object, const std::string& name,
                     const std::vector<std::string>& values) {
  remove_if_present(object, name);
  const H5::StrType type = utf8_string_type();
  H5::Attribute attr = object.createAttribute(name, type, vector_space(values.size(), 0));
  if (values.empty()) return;
  std::vector<const char*> pointers;
  pointers.reserve(values.size());
  for (const std::string& value : values) pointers.push_back(value.c_str());
  attr.write(type, pointers.data());
}

std::optional<std::string> read_string_attribute(const H5::H5Object& object,
                                                 const std::string& name) {
  if (!object.attrExists(name)) return std::nullopt;
  H5::Attribute attr = object.openAttribute(name);
  if (attr.getTypeClass() != H5T_STRING || element_count(attr.getSpace()) != 1) {
    throw H5::AttributeIException(name, "attribute is not a single string");
  }
  std::string value;
  attr.read(attr.getStrType(), value);
  return value;
}

std::optional<double> read_double_attribute(const H5::H5Object& object, const std::string& name) {
  return read_scalar<double>(object, name, H5::PredType::NATIVE_DOUBLE);
}

std::optional<std::int64_t> read_int_attribute(const H5::H5Object& object,
                                               const std::string& name) {
  return read_scalar<std::int64_t>(object, name, H5::PredType::NATIVE_INT64);
}

std::optional<std::vector<double>> read_double_array_attribute(const H5::H5Object& object,
                                                               const std::string& name,
                                                               std::size_t* columns) {
  if (!object.attrExists(name)) return std::nullopt;
  H5::Attribute attr = object.openAttribute(name);
  const H5T_class_t type_class = attr.getTypeClass();
  if (type_class != H5T_INTEGER && type_class != H5T_FLOAT) {
    throw H5::AttributeIException(name, "attribute is not numeric");
  }
  const H5::DataSpace space = attr.getSpace();
  std::vector<double> values(element_count(space));
  if (columns != nullptr) {
    *columns = 1;
    if (!values.empty() && space.getSimpleExtentNdims() == 2) {
      std::array<hsize_t, 2> dims{};
      space.getSimpleExtentDims(dims.data());
      *columns = static_cast<std::size_t>(dims[1]);
    }
  }
  if (!values.empty()) attr.read(H5::PredType::NATIVE_DOUBLE, values.data());
  return values;
}

std::optional<std::vector<std::string>> read_string_array_attribute(const H5::H5Object& object,
                                                                    const std::string& name) {
  if (!object.attrExists(name)) return std::nullopt;
  H5::Attribute attr = object.openAttribute(name);
  if (attr.getTypeClass() != H5T_STRING) {
    throw H5::AttributeIException(name, "attribute is not a list of strings");
  }
  const H5::DataSpace space = attr.getSpace();
  const std::size_t count = element_count(space);
  std::vector<std::string> values;
  if (count == 0) return values;
  const H5::StrType file_type = attr.getStrType();
  if (!file_type.isVariableStr()) {
    const std::size_t width = file_type.getSize();
    std::vector<char> buffer(width * count);
    attr.read(file_type, buffer.data());
    append_fixed_width(buffer, width, count, values);
    return values;
  }
  const H5::StrType type = utf8_string_type();
  std::vector<char*> pointers(count, nullptr);
  attr.read(type, pointers.data());
  for (char* text : pointers) values.emplace_back(text != nullptr ? text : "");
  H5Dvlen_reclaim(type.getId(), space.getId(), H5P_DEFAULT, pointers.data());
  return values;
}

void write_string_dataset(H5::Group& group, const std::string& name,
                          const std::vector<std::string>& values) {
  const H5::StrType type = utf8_string_type();
  H5::DataSet dataset = group.createDataSet(name, type, vector_space(values.size(), 0));
  if (values.empty()) return;
  std::vector<const char*> pointers;
  pointers.reserve(values.size());
  for (const std::string& value : values) pointers.push_back(value.c_str());
  dataset.write(pointers.data(), type);
}

std::vector<std::string> read_string_dataset(const H5::DataSet& dataset, std::size_t first,
                                             std::size_t count) {
  std::vector<std::string> values;
  if (dataset.getTypeClass() != H5T_STRING) {
    throw H5::DataSetIException(dataset.getObjName(), "dataset does not hold strings");
  }
  const std::size_t total = row_count(dataset);
  if (first >= total) return values;
  count = std::min(count, total - first);
  if (count == 0) return values;
  const H5::StrType file_type = dataset.getStrType();
  const hsize_t offset[1] = {first};
  const hsize_t extent[1] = {count};
  H5::DataSpace file_space = dataset.getSpace();
  file_space.selectHyperslab(H5S_SELECT_SET, extent, offset);
  H5::DataSpace memory_space(1, extent);
  if (!file_type.isVariableStr()) {
    const std::size_t width = file_type.getSize();
    std::vector<char> buffer(width * count);
    dataset.read(buffer.data(), file_type, memory_space, file_space);
    append_fixed_width(buffer, width, count, values);
    return values;
  }
  const H5::StrType type = utf8_string_type();
  std::vector<char*> pointers(count, nullptr);
  dataset.read(pointers.data(), type, memory_space, file_space);
  values.reserve(count);
  for (char* text : pointers) values.emplace_back(text != nullptr ? text : "");
  H5Dvlen_reclaim(type.getId(), memory_space.getId(), H5P_DEFAULT, pointers.data());
  return values;
}

AppendDataset::AppendDataset(H5::Group& group, const std::string& name,
                             const H5::DataType& file_type, std::size_t width,
                             const ChunkSettings& chunks)
    : width_(width) {
  const int rank = width == 0 ? 1 : 2;
  const std::size_t row_bytes = file_type.getSize() * std::max<std::size_t>(width, 1);
  const hsize_t chunk_rows =
      std::max(ChunkSettings::kMinChunkRows,
               std::min(chunks.rows_per_flush, chunks.chunk_bytes / row_bytes));
  const hsize_t dims[2] = {0, width};
  const hsize_t max_dims[2] = {H5S_UNLIMITED, width};
  const hsize_t chunk_dims[2] = {chunk_rows, std::max<std::size_t>(width, 1)};
  H5::DSetCreatPropList properties;
  properties.setChunk(rank, chunk_dims);
  if (chunks.deflate_level > 0 && file_type.getClass() != H5T_STRING) {
    // Shuffling the bytes of each value first roughly doubles what deflate gains on doubles.
    properties.setShuffle();
    properties.setDeflate(chunks.deflate_level);
  }
  // Rows are only appended, so the chunk cache needs to hold no more than the last chunk (and
  // the next one while a write spans both). HDF5's default of 1 MiB per dataset would hold on to
  // finished chunks, costing memory and time on every extend.
  H5::DSetAccPropList access;
  const std::size_t chunk_size = static_cast<std::size_t>(chunk_rows) * row_bytes;
  access.setChunkCache(7, 2 * chunk_size + 1024, 1.0);
  dataset_ =
      group.createDataSet(name, file_type, H5::DataSpace(rank, dims, max_dims), properties, access);
}

void AppendDataset::append(const void* data, std::size_t rows, const H5::DataType& memory_type) {
  if (rows == 0) return;
  const int rank = width_ == 0 ? 1 : 2;
  const hsize_t new_dims[2] = {rows_ + rows, width_};
  dataset_.extend(new_dims);
  H5::DataSpace file_space = dataset_.getSpace();
  const hsize_t offset[2] = {rows_, 0};
  const hsize_t extent[2] = {rows, width_};
  file_space.selectHyperslab(H5S_SELECT_SET, extent, offset);
  H5::DataSpace memory_space(rank, extent);
  dataset_.write(data, memory_type, memory_space, file_space);
  rows_ += rows;
}

std::size_t row_count(const H5::DataSet& dataset) {
  const H5::DataSpace space = dataset.getSpace();
  if (space.getSimpleExtentType() != H5S_SIMPLE) return 0;
  const int rank = space.getSimpleExtentNdims();
  if (rank < 1 || rank > 2) return 0;
  std::array<hsize_t, 2> dims{};
  space.getSimpleExtentDims(dims.data());
  return static_cast<std::size_t>(dims[0]);
}

std::size_t column_count(const H5::DataSet& dataset) {
  const H5::DataSpace space = dataset.getSpace();
  if (space.getSimpleExtentType() != H5S_SIMPLE || space.getSimpleExtentNdims() != 2) return 1;
  std::array<hsize_t, 2> dims{};
  space.getSimpleExtentDims(dims.data());
  return static_cast<std::size_t>(dims[1]);
}

void read_rows(const H5::DataSet& dataset, std::size_t first, std::size_t count,
               const H5::DataType& memory_type, void* out) {
  if (count == 0) return;
  H5::DataSpace file_space = dataset.getSpace();
  const int rank = file_space.getSimpleExtentNdims();
  const hsize_t offset[2] = {first, 0};
  const hsize_t extent[2] = {count, rank == 2 ? column_count(dataset) : 1};
  file_space.selectHyperslab(H5S_SELECT_SET, extent, offset);
  H5::DataSpace memory_space(rank, extent);
  dataset.read(out, memory_type, memory_space, file_space);
}

}  // namespace pulsewise::detail::h5
