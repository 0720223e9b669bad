#include "NetcdfSeriesFile.hpp"

#include <fcntl.h>
#include <netcdf.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdint>
#include <cstdio>
#include <vector>
#include <system_error>

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/NetcdfHeader.hpp"
#include "reachwise/io/OutputFiles.hpp"

namespace reachwise::io::detail {

std::mutex& netcdfMutex() {
  static std::mutex m;
  return m;
}

void check(int status, const std::filesystem::path& file, const std::string& doing) {
  if (status == NC_NOERR) return;
  InputLocation where;
  where.file = file.string();
  throw InputError(where, fmt::format("netCDF: {}: {}", doing, nc_strerror(status)));
}

int openForReading(const std::filesystem::path& path, int* ncid) {
  std::vector<std::uint8_t> head;
  std::error_code ec;
  const auto size = std::filesystem::file_size(path, ec);
  if (!ec) head.resize(static_cast<std::size_t>(std::min<std::uintmax_t>(size, std::uintmax_t{16} << 20)));
  std::size_t got = 0;
  if (std::FILE* f = head.empty() ? nullptr : std::fopen(path.c_str(), "rb")) {
    got = std::fread(head.data(), 1, head.size(), f);
    std::fclose(f);
  }
  head.resize(got);
  if (const auto problem = classicHeaderProblem(head, !ec && got == size)) {
    InputLocation where;
    where.file = path.string();
    throw InputError(where, "is not a valid NetCDF file: " + *problem);
  }
  return nc_open(path.c_str(), NC_NOWRITE, ncid);
}

namespace {

/// check() for a call that writes to the disk: netCDF reports a failed
/// write of HDF5 as a generic error (a full disk reads "Permission
/// denied"), so the system's reason, `error` (errno read right after the
/// call, cleared right before it), is given instead when there is one.
void checkWrite(int status, int error, const std::filesystem::path& file, const std::string& doing) {
  if (status == NC_NOERR) return;
  if (error == 0) check(status, file, doing);
  InputLocation where;
  where.file = file.string();
  throw InputError(where, fmt::format("netCDF: {}: {}", doing, std::generic_category().message(error)));
}

void putText(int ncid, int varid, const char* name, const std::string& value,
             const std::filesystem::path& file) {
  check(nc_put_att_text(ncid, varid, name, value.size(), value.c_str()), file,
        fmt::format("writing attribute {}", name));
}

/// Points every descriptor of this process open on the file (`dev`, `ino`)
/// at /dev/null.
void redirectToNull(dev_t dev, ino_t ino) noexcept {
  const int null_fd = ::open("/dev/null", O_WRONLY | O_CLOEXEC);
  if (null_fd < 0) return;
  const auto redirect = [&](int fd) {
    struct stat st {};
    if (fd != null_fd && ::fstat(fd, &st) == 0 && S_ISREG(st.st_mode) && st.st_dev == dev && st.st_ino == ino)
      ::dup2(null_fd, fd);
  };
  std::error_code ec;
  std::filesystem::directory_iterator fds("/proc/self/fd", ec);
  if (!ec) {
    std::vector<int> open_fds;  // listed first: the listing itself holds a descriptor
    for (const auto& entry : fds) open_fds.push_back(std::atoi(entry.path().filename().c_str()));
    for (int fd : open_fds) redirect(fd);
  } else {
    for (int fd = 0; fd < 4096; ++fd) redirect(fd);
  }
  ::close(null_fd);
}

/// " (no space left on the file system)" when the folder of `file` has no
/// free block left, else "".
std::string spaceNote(const std::filesystem::path& file) {
  struct statvfs fs {};
  const std::filesystem::path dir = file.has_parent_path() ? file.parent_path() : std::filesystem::path(".");
  if (::statvfs(dir.c_str(), &fs) == 0 && fs.f_bavail == 0) return " (no space left on the file system)";
  return "";
}

}  // namespace

int SeriesFile::closeOrDiscard(int* error) noexcept {
  errno = 0;
  const int status = nc_close(ncid_);
  if (error) *error = errno;  // read at once: what follows may change it
  if (status != NC_NOERR && have_identity_) {
    // HDF5 keeps a file open when the flush at its close fails (a full disk,
    // a file size limit): netCDF reports the error but leaves the file and
    // its datasets open, and HDF5's exit handler crashes when it closes
    // them at process exit. The file is discarded anyway, so what is left
    // to write goes to /dev/null and the file is closed again, which
    // releases everything.
    redirectToNull(dev_, ino_);
    if (nc_close(ncid_) != NC_NOERR) nc_abort(ncid_);
  }
  ncid_ = -1;
  return status;
}

SeriesFile::SeriesFile(std::filesystem::path path, const routing::TimeAxis& axis,
                       const std::vector<std::string>& reach_ids,
                       std::vector<SeriesVariable> variables, const SeriesFileOptions& options,
                       std::vector<SeriesStations> more)
    : path_(std::move(path)), variables_(std::move(variables)), reaches_(reach_ids.size()),
      steps_(axis.steps) {
  for (const SeriesStations& set : more)
    if (set.ids.empty()) throw InvalidParameter(set.id_variable, "no series to write");
  if (steps_ == 0) throw InvalidParameter("time axis", "no steps to write");
  if (reaches_ == 0) throw InvalidParameter("reach_id", "no reaches to write");
  if (options.reach_chunk == 0) throw InvalidParameter("reach_chunk", "must be at least 1");
  // Same directory, so that the final rename stays on one file system.
  requireParentFolder(path_);
  temp_ = partialPath(path_);
  const std::lock_guard lock(netcdfMutex());
  errno = 0;
  const int created = nc_create(temp_.c_str(), NC_NETCDF4 | NC_CLOBBER, &ncid_);
  const int error = errno;
  if (created != NC_NOERR) {
    // HDF5 may have made the file before failing: nothing may stay behind.
    ncid_ = -1;
    std::error_code ec;
    std::filesystem::remove(temp_, ec);
    checkWrite(created, error, path_, "creating the file");
  }
  if (struct stat st {}; ::stat(temp_.c_str(), &st) == 0) {
    dev_ = st.st_dev;
    ino_ = st.st_ino;
    have_identity_ = true;
  }
  try {
    define(axis, reach_ids, options, more);
  } catch (...) {
    abandon();
    throw;
  }
}

void SeriesFile::define(const routing::TimeAxis& axis, const std::vector<std::string>& reach_ids,
                        const SeriesFileOptions& options, const std::vector<SeriesStations>& more) {
  int dim_time = 0, dim_reach = 0, var_time = 0, var_id = 0;
  check(nc_def_dim(ncid_, "time", steps_, &dim_time), temp_, "defining dimension time");
  check(nc_def_dim(ncid_, "reach", reaches_, &dim_reach), temp_, "defining dimension reach");
  check(nc_def_var(ncid_, "time", NC_DOUBLE, 1, &dim_time, &var_time), temp_, "defining time");
  putText(ncid_, var_time, "standard_name", "time", temp_);
  putText(ncid_, var_time, "long_name", "time", temp_);
  putText(ncid_, var_time, "units", kTimeUnits, temp_);
  putText(ncid_, var_time, "calendar", "standard", temp_);
  putText(ncid_, var_time, "axis", "T", temp_);
  const int offset = axis.utc_offset_min;
  check(nc_put_att_int(ncid_, var_time, "utc_offset_minutes", NC_INT, 1, &offset), temp_,
        "writing attribute utc_offset_minutes");
  check(nc_def_var(ncid_, "reach_id", NC_STRING, 1, &dim_reach, &var_id), temp_, "defining reach_id");
  putText(ncid_, var_id, "long_name", "reach id", temp_);
  putText(ncid_, var_id, "cf_role", "timeseries_id", temp_);

  const nc_type type = options.single_precision ? NC_FLOAT : NC_DOUBLE;
  const double fill = options.single_precision ? static_cast<double>(NC_FILL_FLOAT) : NC_FILL_DOUBLE;
  // One chunk holds the whole series of `chunk` stations (see docs/formats.md).
  const auto defineVariables = [&](int dim, std::size_t length, const std::vector<SeriesVariable>& variables,
                                   std::size_t chunk, const std::string& id_variable) {
    const int dims[2] = {dim_time, dim};
    const std::size_t chunks[2] = {steps_, std::min(chunk, length)};
    for (const SeriesVariable& v : variables) {
      int id = 0;
      check(nc_def_var(ncid_, v.name.c_str(), type, 2, dims, &id), temp_, "defining " + v.name);
      check(nc_def_var_chunking(ncid_, id, NC_CHUNKED, chunks), temp_, "chunking " + v.name);
      if (options.deflate_level > 0)
        check(nc_def_var_deflate(ncid_, id, 1, 1, options.deflate_level), temp_, "compressing " + v.name);
      check(nc_put_att_double(ncid_, id, "_FillValue", type, 1, &fill), temp_, "fill of " + v.name);
      putText(ncid_, id, "units", v.units, temp_);
      putText(ncid_, id, "long_name", v.long_name, temp_);
      if (!v.standard_name.empty()) putText(ncid_, id, "standard_name", v.standard_name, temp_);
      putText(ncid_, id, "coordinates", id_variable, temp_);
      varids_.push_back(id);
      var_length_.push_back(length);
    }
  };
  defineVariables(dim_reach, reaches_, variables_, options.reach_chunk, "reach_id");
  std::vector<int> more_ids;
  for (const SeriesStations& set : more) {
    int dim = 0, var = 0;
    check(nc_def_dim(ncid_, set.dimension.c_str(), set.ids.size(), &dim), temp_, "defining dimension " + set.dimension);
    check(nc_def_var(ncid_, set.id_variable.c_str(), NC_STRING, 1, &dim, &var), temp_, "defining " + set.id_variable);
    putText(ncid_, var, "long_name", set.id_long_name, temp_);
    putText(ncid_, var, "cf_role", "timeseries_id", temp_);
    more_ids.push_back(var);
    defineVariables(dim, set.ids.size(), set.variables, 1, set.id_variable);
    variables_.insert(variables_.end(), set.variables.begin(), set.variables.end());
  }
  putText(ncid_, NC_GLOBAL, "Conventions", "CF-1.8", temp_);
  putText(ncid_, NC_GLOBAL, "title", options.title, temp_);
  putText(ncid_, NC_GLOBAL, "source", options.source, temp_);
  if (!options.history.empty()) putText(ncid_, NC_GLOBAL, "history", options.history, temp_);
  errno = 0;
  const int ended = nc_enddef(ncid_);
  checkWrite(ended, errno, path_, "ending definitions");

  std::vector<double> times(steps_);
  for (std::size_t k = 0; k < steps_; ++k) times[k] = axis.at(static_cast<double>(k));
  check(nc_put_var_double(ncid_, var_time, times.data()), temp_, "writing time");
  std::vector<const char*> ids;
  ids.reserve(reaches_);
  for (const std::string& id : reach_ids) ids.push_back(id.c_str());
  check(nc_put_var_string(ncid_, var_id, ids.data()), temp_, "writing reach_id");
  for (std::size_t k = 0; k < more.size(); ++k) {
    std::vector<const char*> texts;
    for (const std::string& id : more[k].ids) texts.push_back(id.c_str());
    check(nc_put_var_string(ncid_, more_ids[k], texts.data()), temp_, "writing " + more[k].id_variable);
  }
}

void SeriesFile::write(std::size_t variable, std::size_t reach, std::span<const double> values) {
  if (finished_) throw InternalError("write after finish on " + path_.string());
  REACHWISE_ASSERT(variable < varids_.size());
  if (reach >= var_length_[variable])
    throw InternalError(fmt::format("index {} beyond the {} series of {} in {}", reach, var_length_[variable],
                                    variables_[variable].name, path_.string()));
  if (values.size() != steps_)
    throw InternalError(fmt::format("{} values for reach index {} on an axis of {} steps",
                                    values.size(), reach, steps_));
  const std::size_t start[2] = {0, reach};
  const std::size_t count[2] = {steps_, 1};
  const std::lock_guard lock(netcdfMutex());
  errno = 0;
  const int written = nc_put_vara_double(ncid_, varids_[variable], start, count, values.data());
  const int error = errno;
  if (written != NC_NOERR)
    checkWrite(written, error, path_, "writing " + variables_[variable].name + spaceNote(temp_));
}

void SeriesFile::finish(OutputCommit* into) {
  if (finished_) return;
  {
    const std::lock_guard lock(netcdfMutex());
    int error = 0;
    const int status = closeOrDiscard(&error);
    // (The destructor removes the temporary file.)
    if (status != NC_NOERR) checkWrite(status, error, path_, "closing the file" + spaceNote(temp_));
  }
  finished_ = true;  // from here on the OutputCommit owns the file
  if (into) {
    into->add(temp_, path_);
  } else {
    OutputCommit own(true);
    own.add(temp_, path_);
    own.commit();
  }
}

void SeriesFile::abandon() noexcept {
  if (ncid_ >= 0) closeOrDiscard();
  std::error_code ec;
  std::filesystem::remove(temp_, ec);
}

SeriesFile::~SeriesFile() {
  if (finished_) return;
  const std::lock_guard lock(netcdfMutex());
  abandon();
}

}  // namespace reachwise::io::detail
