// HDF5 helpers the checkpoint needs beyond io/h5.hpp: unsigned 64-bit
// attributes, collective 2-D hyperslab transfers, replicated small datasets
// (written from rank 0's selection inside a collective call, read by all), and
// listing the attributes or datasets of an object.
#pragma once

#include <hdf5.h>
#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::ckpt {

Status write_u64_attribute(hid_t obj, const std::string& name, std::uint64_t value);
Result<std::uint64_t> read_u64_attribute(hid_t obj, const std::string& name);

// Collective transfer of the [start, start+count) box of a 2-D dataset; the
// memory buffer is the box in row-major order. count may be zero on some ranks.
Status transfer_box(hid_t dataset, hid_t mem_type, std::int64_t start0, std::int64_t start1, std::int64_t count0,
                    std::int64_t count1, void* buf, bool write);

// Collective: creates a dataset of shape dims and writes `data` (the whole
// dataset, identical on every rank) from rank 0.
Status write_replicated(MPI_Comm comm, hid_t loc, const std::string& name, hid_t file_type, hid_t mem_type,
                        const std::vector<std::int64_t>& dims, const void* data);

// Collective: every rank reads the whole dataset, which must have `rank`
// dimensions and a numeric type; returns its shape in dims.
Result<std::vector<double>> read_replicated_doubles(hid_t loc, const std::string& name, int rank,
                                                    std::vector<std::int64_t>& dims);
Result<std::vector<std::int64_t>> read_replicated_ints(hid_t loc, const std::string& name, std::int64_t length);

// Names of the attributes of obj / the links in a group, in name order.
std::vector<std::string> attribute_names(hid_t obj);
std::vector<std::string> link_names(hid_t group);

}  // namespace lodestone::ckpt
