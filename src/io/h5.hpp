// A thin RAII layer over the HDF5 C API, for parallel (MPI-IO) files.
//
// Every handle closes itself; every read of an attribute or dataset shape
// returns a Result with a message that names the object. HDF5's own error
// stack printing is switched off at start-up; we report in our own words.
#pragma once

#include <hdf5.h>
#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::h5 {

// Owns one HDF5 identifier of any kind (file, group, dataset, space, type, plist).
class Handle {
 public:
  Handle() = default;
  explicit Handle(hid_t id) : id_(id) {}
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  Handle(Handle&& o) noexcept : id_(o.id_) { o.id_ = H5I_INVALID_HID; }
  Handle& operator=(Handle&& o) noexcept;
  ~Handle() { close(); }
  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }
  void close();
  // Closes a file handle, reporting whether HDF5 could flush it.
  bool close_file();
  // For a file written in parallel: flushes it through MPI-IO, which syncs it to
  // storage on every rank (MPI_File_sync), so the rows each rank wrote are on disk
  // and not only what rank 0 fsyncs before the rename; then closes it. Collective:
  // every rank calls it. Reports whether both steps succeeded on this rank.
  bool sync_and_close_file();

 private:
  hid_t id_ = H5I_INVALID_HID;
};

void silence_errors();

// HDF5 1.10 frees a file's state when closing it fails (the final flush could not
// be written: disk full, file-size limit) yet keeps its identifier; HDF5's own
// shutdown, run from MPI_Finalize, then closes that identifier again and crashes.
// Handles remember a failed close here, and Runtime's shutdown then skips HDF5's
// clean-up (the process is ending; the operating system closes its files).
bool a_close_failed();
void skip_library_shutdown();

// A transfer property list for collective dataset I/O.
Handle collective_transfer();

// Opens an existing file for reading on every rank of comm (collective). Checks
// first, on rank 0, that the path exists and is an HDF5 file.
Result<Handle> open_read(MPI_Comm comm, const std::string& path);
// Creates a new file (collective); fails if it exists.
Result<Handle> create(MPI_Comm comm, const std::string& path);

bool exists(hid_t loc, const std::string& path);
Result<Handle> open_group(hid_t file, const std::string& path, const std::string& file_name);
Result<Handle> create_group(hid_t file, const std::string& path);

bool has_attribute(hid_t obj, const std::string& name);
Result<std::string> read_string_attribute(hid_t obj, const std::string& name);
Result<std::int64_t> read_int_attribute(hid_t obj, const std::string& name);
Result<double> read_double_attribute(hid_t obj, const std::string& name);
Status write_string_attribute(hid_t obj, const std::string& name, const std::string& value);
Status write_int_attribute(hid_t obj, const std::string& name, std::int64_t value);
Status write_double_attribute(hid_t obj, const std::string& name, double value);

// Shape and element class of a dataset.
struct DatasetShape {
  std::vector<std::int64_t> dims;
  H5T_class_t type_class = H5T_NO_CLASS;
  std::size_t type_size = 0;
};
Result<DatasetShape> dataset_shape(hid_t dataset);

// Collective read/write of a contiguous 1-D range [offset, offset+count) of a
// 1-D dataset (count may be 0 on some ranks). Memory type selects conversion.
Status read_range(hid_t dataset, hid_t mem_type, std::int64_t offset, std::int64_t count, void* out);
Status write_range(hid_t dataset, hid_t mem_type, std::int64_t offset, std::int64_t count, const void* in);
// Collective read/write of rows [row, row+nrows) of a 2-D dataset with ncols columns.
Status read_rows(hid_t dataset, hid_t mem_type, std::int64_t row, std::int64_t nrows, std::int64_t ncols, void* out);
Status write_rows(hid_t dataset, hid_t mem_type, std::int64_t row, std::int64_t nrows, std::int64_t ncols, const void* in);

// Creates a dataset of the given element type and shape (collective). It is not
// pre-filled: the caller writes every element.
Result<Handle> create_dataset(hid_t loc, const std::string& name, hid_t file_type, const std::vector<std::int64_t>& dims);

}  // namespace lodestone::h5
