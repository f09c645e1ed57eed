// chaosweep's HDF5 layer: a small RAII wrapper of the parallel HDF5 C API. This folder is the
// only place that includes <hdf5.h>; its headers expose none of it.
//
//   File     create for parallel collective writing (MPI-IO), open read-only serially or in
//            parallel, flush, close                                       (file.hpp)
//   Group    create/open nested groups, list members, create datasets and
//            dimensions without coordinate values                         (group.hpp)
//   Dataset  collective hyperslab writes, reads, dimension scales         (dataset.hpp)
//   Object   scalar attributes (UTF-8 string, double, int64)              (object.hpp)
//
// Rules for parallel files, which the caller must keep:
//   - every metadata change (creating a group, dataset, attribute or dimension, making or
//     attaching a scale) is made by every rank, in the same order, with the same arguments;
//   - raw-data writes are collective: every rank calls, each with its own block, a rank with
//     nothing to write passing an empty block;
//   - variable-length strings are written by rank 0 when the file closes (HDF5 1.10 cannot
//     write variable-length raw data through MPI-IO).
// Every failure throws chaosweep::IoError carrying HDF5's own message; HDF5's automatic
// error printing is switched off, so nothing reaches stderr.
#pragma once

#include "h5/dataset.hpp"
#include "h5/file.hpp"
#include "h5/group.hpp"
#include "h5/object.hpp"
#include "h5/types.hpp"
