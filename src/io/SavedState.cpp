// The saved-state file (docs/formats.md, "Saved state"): CF-NetCDF with a
// `reach` dimension for each reach's numerics, a contiguous ragged array
// (CF 1.8 §9.3.3, `sample_dimension`) of the section flows on `point`, and
// a `lake` dimension for the lakes' storage.
#include "reachwise/io/SavedState.hpp"

#include <netcdf.h>

#include <cmath>
#include <limits>
#include <set>

#include <fmt/format.h>

#include "NetcdfSeriesFile.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/ResultsWriter.hpp"
#include "reachwise/routing/Muskingum.hpp"

namespace reachwise::io {

namespace {

using detail::check;
namespace fs = std::filesystem;

constexpr const char* kVersionAttribute = "reachwise_state_version";

/// Closes a netCDF file when it goes out of scope (an error on the way).
struct NcFile {
  int id = -1;
  ~NcFile() {
    if (id >= 0 && nc_close(id) != NC_NOERR) nc_abort(id);
  }
  int release() {
    const int i = id;
    id = -1;
    return i;
  }
};

void putText(int ncid, int varid, const char* name, const std::string& value, const fs::path& file) {
  check(nc_put_att_text(ncid, varid, name, value.size(), value.c_str()), file, fmt::format("writing attribute {}", name));
}

int defineVar(int ncid, const char* name, nc_type type, int dim, const char* units, const char* long_name,
              const fs::path& file) {
  int id = 0;
  check(nc_def_var(ncid, name, type, 1, &dim, &id), file, fmt::format("defining {}", name));
  if (units && *units) putText(ncid, id, "units", units, file);
  putText(ncid, id, "long_name", long_name, file);
  return id;
}

void putStrings(int ncid, int var, const std::vector<std::string>& texts, const fs::path& file, const char* name) {
  std::vector<const char*> p;
  for (const auto& t : texts) p.push_back(t.c_str());
  if (!p.empty()) check(nc_put_var_string(ncid, var, p.data()), file, fmt::format("writing {}", name));
}

void writeInto(const fs::path& file, const SavedState& st, const StateFileOptions& options) {
  const std::lock_guard lock(detail::netcdfMutex());
  NcFile nc;
  check(nc_create(file.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc.id), file, "creating the file");
  const std::size_t n = st.reaches.size();
  std::size_t points = 0;
  for (const auto& r : st.reaches) points += r.q_m3s.size();
  int d_time = 0, d_reach = 0, d_point = 0, d_lake = -1;
  check(nc_def_dim(nc.id, "time", 1, &d_time), file, "defining dimension time");
  check(nc_def_dim(nc.id, "reach", n, &d_reach), file, "defining dimension reach");
  check(nc_def_dim(nc.id, "point", points, &d_point), file, "defining dimension point");
  if (!st.lakes.empty()) check(nc_def_dim(nc.id, "lake", st.lakes.size(), &d_lake), file, "defining dimension lake");

  const int v_time = defineVar(nc.id, "time", NC_DOUBLE, d_time, detail::kTimeUnits, "end time of the run", file);
  putText(nc.id, v_time, "standard_name", "time", file);
  putText(nc.id, v_time, "calendar", "standard", file);
  putText(nc.id, v_time, "axis", "T", file);
  check(nc_put_att_int(nc.id, v_time, "utc_offset_minutes", NC_INT, 1, &st.utc_offset_min), file,
        "writing attribute utc_offset_minutes");
  const int v_id = defineVar(nc.id, "reach_id", NC_STRING, d_reach, "", "reach id", file);
  putText(nc.id, v_id, "cf_role", "timeseries_id", file);
  const int v_method = defineVar(nc.id, "reach_method", NC_STRING, d_reach, "", "method that routed the reach", file);
  const int v_m = defineVar(nc.id, "subreaches", NC_INT, d_reach, "1", "sub-reaches (0: a dry reach, no flows kept)", file);
  const int v_k = defineVar(nc.id, "substeps", NC_INT, d_reach, "1", "sub-steps per time step", file);
  const int v_ref = defineVar(nc.id, "reference_discharge", NC_DOUBLE, d_reach, "m3 s-1",
                              "reference flow of the grid and parameters", file);
  const int v_tlo = defineVar(nc.id, "table_min_discharge", NC_DOUBLE, d_reach, "m3 s-1",
                              "lowest flow of the rating table (vpmc; 0 without a table)", file);
  const int v_thi = defineVar(nc.id, "table_max_discharge", NC_DOUBLE, d_reach, "m3 s-1",
                              "highest flow of the rating table (vpmc; 0 without a table)", file);
  const int v_tn = defineVar(nc.id, "table_nodes", NC_INT, d_reach, "1", "rating-table nodes (0: no table)", file);
  const int v_store = defineVar(nc.id, "reach_storage", NC_DOUBLE, d_reach, "m3", "water stored in the reach", file);
  const int v_count = defineVar(nc.id, "point_count", NC_INT, d_reach, "1", "section flows of the reach", file);
  putText(nc.id, v_count, "sample_dimension", "point", file);
  const int v_q = defineVar(nc.id, "discharge", NC_DOUBLE, d_point, "m3 s-1",
                            "flow at the ends of the sub-reaches, top to bottom, reach after reach", file);
  int v_lid = -1, v_ls = -1, v_ll = -1, v_lk = -1;
  if (d_lake >= 0) {
    v_lid = defineVar(nc.id, "lake_id", NC_STRING, d_lake, "", "lake id", file);
    putText(nc.id, v_lid, "cf_role", "timeseries_id", file);
    v_ls = defineVar(nc.id, "lake_storage", NC_DOUBLE, d_lake, "m3", "water stored in the lake", file);
    v_ll = defineVar(nc.id, "lake_level", NC_DOUBLE, d_lake, "m", "water level of the lake", file);
    v_lk = defineVar(nc.id, "lake_substeps", NC_INT, d_lake, "1", "level-pool sub-steps per time step", file);
  }
  putText(nc.id, NC_GLOBAL, "Conventions", "CF-1.8", file);
  putText(nc.id, NC_GLOBAL, "title", "reachwise saved state", file);
  putText(nc.id, NC_GLOBAL, "source", options.source, file);
  if (!options.history.empty()) putText(nc.id, NC_GLOBAL, "history", options.history, file);
  putText(nc.id, NC_GLOBAL, "comment", kResultsCaution, file);
  const int version = kStateFormatVersion;
  check(nc_put_att_int(nc.id, NC_GLOBAL, kVersionAttribute, NC_INT, 1, &version), file,
        fmt::format("writing attribute {}", kVersionAttribute));
  putText(nc.id, NC_GLOBAL, "method", st.method, file);
  check(nc_put_att_double(nc.id, NC_GLOBAL, "time_step_s", NC_DOUBLE, 1, &st.dt_s), file,
        "writing attribute time_step_s");
  putText(nc.id, NC_GLOBAL, "end_time",
          formatIsoTime(st.time_unix_s, st.utc_offset_min, st.time_unix_s == std::floor(st.time_unix_s) ? 0 : 3),
          file);
  check(nc_enddef(nc.id), file, "ending definitions");

  check(nc_put_var_double(nc.id, v_time, &st.time_unix_s), file, "writing time");
  putStrings(nc.id, v_id, st.reach_ids, file, "reach_id");
  std::vector<std::string> methods;
  std::vector<int> m, k, tn, count;
  std::vector<double> ref, tlo, thi, store, q;
  q.reserve(points);
  for (const auto& r : st.reaches) {
    methods.emplace_back(routing::methodName(r.method));
    m.push_back(static_cast<int>(r.subreaches));
    k.push_back(static_cast<int>(r.substeps));
    tn.push_back(static_cast<int>(r.table_nodes));
    count.push_back(static_cast<int>(r.q_m3s.size()));
    ref.push_back(r.reference_q_m3s);
    tlo.push_back(r.table_nodes > 0 ? r.table_min_q_m3s : 0.0);
    thi.push_back(r.table_nodes > 0 ? r.table_max_q_m3s : 0.0);
    store.push_back(r.storage_m3);
    q.insert(q.end(), r.q_m3s.begin(), r.q_m3s.end());
  }
  putStrings(nc.id, v_method, methods, file, "reach_method");
  if (n > 0) {
    check(nc_put_var_int(nc.id, v_m, m.data()), file, "writing subreaches");
    check(nc_put_var_int(nc.id, v_k, k.data()), file, "writing substeps");
    check(nc_put_var_double(nc.id, v_ref, ref.data()), file, "writing reference_discharge");
    check(nc_put_var_double(nc.id, v_tlo, tlo.data()), file, "writing table_min_discharge");
    check(nc_put_var_double(nc.id, v_thi, thi.data()), file, "writing table_max_discharge");
    check(nc_put_var_int(nc.id, v_tn, tn.data()), file, "writing table_nodes");
    check(nc_put_var_double(nc.id, v_store, store.data()), file, "writing reach_storage");
    check(nc_put_var_int(nc.id, v_count, count.data()), file, "writing point_count");
  }
  if (!q.empty()) check(nc_put_var_double(nc.id, v_q, q.data()), file, "writing discharge");
  if (d_lake >= 0) {
    std::vector<std::string> ids;
    std::vector<double> s, h;
    std::vector<int> ks;
    for (const auto& l : st.lakes) {
      ids.push_back(l.lake_id);
      s.push_back(l.storage_m3);
      h.push_back(l.level_m);
      ks.push_back(static_cast<int>(l.substeps));
    }
    putStrings(nc.id, v_lid, ids, file, "lake_id");
    check(nc_put_var_double(nc.id, v_ls, s.data()), file, "writing lake_storage");
    check(nc_put_var_double(nc.id, v_ll, h.data()), file, "writing lake_level");
    check(nc_put_var_int(nc.id, v_lk, ks.data()), file, "writing lake_substeps");
  }
  check(nc_close(nc.release()), file, "closing the file");
}

// ---- reading ----

class Reader {
public:
  explicit Reader(fs::path path) : path_(std::move(path)) {}

  [[noreturn]] void fail(const std::string& field, const std::string& message, const std::string& reach = {},
                         const std::string& lake = {}) const {
    InputLocation at;
    at.file = path_.string();
    at.field = field;
    at.reach_id = reach;
    at.lake_id = lake;
    throw InputError(at, message);
  }

  SavedState read() {
    const std::lock_guard lock(detail::netcdfMutex());
    if (detail::openForReading(path_, &nc_.id) != NC_NOERR) {
      nc_.id = -1;
      std::error_code ec;
      if (!fs::exists(path_, ec)) fail("", "the saved state does not exist");
      fail("", "cannot be read as NetCDF (not a saved state of reachwise route --save-state)");
    }
    SavedState st;
    // Version first: anything else is not worth reading without it.
    {
      nc_type t = 0;
      std::size_t len = 0;
      if (nc_inq_att(nc_.id, NC_GLOBAL, kVersionAttribute, &t, &len) != NC_NOERR)
        fail(kVersionAttribute, "no such attribute: not a saved state of reachwise route --save-state");
      int v = 0;
      if (len != 1 || (t != NC_INT && t != NC_SHORT && t != NC_BYTE) ||
          nc_get_att_int(nc_.id, NC_GLOBAL, kVersionAttribute, &v) != NC_NOERR)
        fail(kVersionAttribute, "must be one integer");
      if (v != kStateFormatVersion)
        fail(kVersionAttribute, fmt::format("is {}; this reachwise reads version {}", v, kStateFormatVersion));
    }
    st.method = textAttribute("method");
    st.dt_s = doubleAttribute("time_step_s");
    if (!(st.dt_s > 0) || !std::isfinite(st.dt_s)) fail("time_step_s", "must be a finite step > 0 s");

    // time: one value, in the CF units written.
    const int d_time = dimension("time");
    if (length(d_time) != 1) fail("time", fmt::format("dimension time must have length 1, has {}", length(d_time)));
    const int v_time = variable("time", {d_time}, false);
    if (textAttribute("units", v_time, "time") != detail::kTimeUnits)
      fail("time", fmt::format("units must be \"{}\"", detail::kTimeUnits));
    check(nc_get_var_double(nc_.id, v_time, &st.time_unix_s), path_, "reading time");
    if (!std::isfinite(st.time_unix_s)) fail("time", "is not finite");
    if (int off = 0; nc_get_att_int(nc_.id, v_time, "utc_offset_minutes", &off) == NC_NOERR &&
                     std::abs(off) <= 18 * 60)
      st.utc_offset_min = off;

    // Reaches: sizes from the variables' own dimension.
    const int d_reach = dimension("reach");
    const std::size_t n = length(d_reach);
    st.reach_ids = strings("reach_id", d_reach, "reach");
    const std::vector<std::string> methods = strings("reach_method", d_reach, "reach");
    const auto m = ints("subreaches", d_reach), k = ints("substeps", d_reach), tn = ints("table_nodes", d_reach),
               count = ints("point_count", d_reach);
    const auto ref = doubles("reference_discharge", d_reach), tlo = doubles("table_min_discharge", d_reach),
               thi = doubles("table_max_discharge", d_reach), store = doubles("reach_storage", d_reach);
    const int d_point = dimension("point");
    const std::vector<double> q = doubles("discharge", d_point);
    std::size_t total = 0;
    std::set<std::string> seen;
    st.reaches.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
      const std::string& id = st.reach_ids[i];
      if (id.empty()) fail("reach_id", fmt::format("reach {} has an empty id", i));
      if (!seen.insert(id).second) fail("reach_id", "appears twice", id);
      routing::ReachState& r = st.reaches[i];
      bool known = false;
      for (const routing::Method mm : {routing::Method::VariableParameter, routing::Method::ConstantParameter,
                                       routing::Method::Muskingum})
        if (methods[i] == routing::methodName(mm)) r.method = mm, known = true;
      if (!known)
        fail("reach_method", fmt::format("\"{}\" is not a method a state can continue (vpmc, mc, muskingum)", methods[i]),
             id);
      if (m[i] < 0 || m[i] > (1 << 20)) fail("subreaches", fmt::format("{} is out of range", m[i]), id);
      if (k[i] < 0 || k[i] > (1 << 20)) fail("substeps", fmt::format("{} is out of range", k[i]), id);
      if (tn[i] < 0 || tn[i] > (1 << 20)) fail("table_nodes", fmt::format("{} is out of range", tn[i]), id);
      r.subreaches = static_cast<std::uint32_t>(m[i]);
      r.substeps = static_cast<std::uint32_t>(k[i]);
      r.table_nodes = static_cast<std::uint32_t>(tn[i]);
      const long expected = m[i] == 0 ? 0L : long{m[i]} + 1;
      if (count[i] != expected)
        fail("point_count", fmt::format("is {}, but {} sub-reaches have {} section flows", count[i], m[i], expected), id);
      if (m[i] > 0 && k[i] == 0) fail("substeps", "must be at least 1", id);
      for (const auto& [name, v] : {std::pair{"reference_discharge", ref[i]}, std::pair{"table_min_discharge", tlo[i]},
                                    std::pair{"table_max_discharge", thi[i]}, std::pair{"reach_storage", store[i]}})
        if (!(v >= 0) || !std::isfinite(v)) fail(name, fmt::format("is negative or not finite ({})", v), id);
      r.reference_q_m3s = ref[i];
      r.storage_m3 = store[i];
      if (r.table_nodes > 0) {
        if (r.table_nodes < 3 || !(tlo[i] > 0) || !(thi[i] > tlo[i]))
          fail("table_min_discharge", fmt::format("a rating table needs 0 < lowest < highest flow and at least 3 "
                                                  "nodes (got {} to {} with {} nodes)", tlo[i], thi[i], tn[i]), id);
        r.table_min_q_m3s = tlo[i];
        r.table_max_q_m3s = thi[i];
      } else if (m[i] > 0 && r.method == routing::Method::VariableParameter) {
        fail("table_nodes", "a vpmc reach needs its rating table (0 nodes)", id);
      }
      const auto c = static_cast<std::size_t>(count[i]);
      if (total + c > q.size())
        fail("point_count", fmt::format("the counts add up to more than the {} values of discharge", q.size()), id);
      r.q_m3s.assign(q.begin() + static_cast<std::ptrdiff_t>(total), q.begin() + static_cast<std::ptrdiff_t>(total + c));
      for (std::size_t j = 0; j < c; ++j)
        if (!(r.q_m3s[j] >= 0) || !std::isfinite(r.q_m3s[j]))
          fail("discharge", fmt::format("section flow {} is negative or not finite ({})", j, r.q_m3s[j]), id);
      total += c;
    }
    if (total != q.size())
      fail("point_count", fmt::format("the counts add up to {}, but discharge has {} values", total, q.size()));

    // Lakes: only when the file has them.
    int d_lake = -1;
    if (nc_inq_dimid(nc_.id, "lake", &d_lake) == NC_NOERR) {
      const std::vector<std::string> ids = strings("lake_id", d_lake, "lake");
      const auto s = doubles("lake_storage", d_lake), h = doubles("lake_level", d_lake);
      const auto ks = ints("lake_substeps", d_lake);
      std::set<std::string> lakes_seen;
      for (std::size_t l = 0; l < ids.size(); ++l) {
        if (ids[l].empty()) fail("lake_id", fmt::format("lake {} has an empty id", l));
        if (!lakes_seen.insert(ids[l]).second) fail("lake_id", "appears twice", {}, ids[l]);
        if (!(s[l] >= 0) || !std::isfinite(s[l]))
          fail("lake_storage", fmt::format("is negative or not finite ({})", s[l]), {}, ids[l]);
        if (!std::isfinite(h[l])) fail("lake_level", "is not finite", {}, ids[l]);
        if (ks[l] < 1 || ks[l] > (1 << 16)) fail("lake_substeps", fmt::format("{} is out of range", ks[l]), {}, ids[l]);
        st.lakes.push_back({ids[l], s[l], h[l], static_cast<std::uint32_t>(ks[l])});
      }
    }
    return st;
  }

private:
  int dimension(const char* name) const {
    int d = 0;
    if (nc_inq_dimid(nc_.id, name, &d) != NC_NOERR) fail(name, "no such dimension");
    return d;
  }
  std::size_t length(int dim) const {
    std::size_t len = 0;
    check(nc_inq_dimlen(nc_.id, dim, &len), path_, "reading a dimension");
    return len;
  }
  /// The id of variable `name`, which must lie on exactly `dims` and be
  /// numeric (or text, `text`).
  int variable(const char* name, std::vector<int> dims, bool text) const {
    int v = 0;
    if (nc_inq_varid(nc_.id, name, &v) != NC_NOERR) fail(name, "no such variable");
    int nd = 0;
    nc_type t = 0;
    check(nc_inq_var(nc_.id, v, nullptr, &t, &nd, nullptr, nullptr), path_, fmt::format("reading {}", name));
    std::vector<int> have(static_cast<std::size_t>(std::max(nd, 0)));
    if (nd > 0) check(nc_inq_vardimid(nc_.id, v, have.data()), path_, fmt::format("reading {}", name));
    if (have != dims) {
      std::string want;
      for (const int d : dims) {
        char dn[NC_MAX_NAME + 1] = {};
        nc_inq_dimname(nc_.id, d, dn);
        want += (want.empty() ? "" : ", ") + std::string(dn);
      }
      fail(name, fmt::format("must have the dimension ({}), has {} dimension(s) of other shape", want, nd));
    }
    const bool numeric = t == NC_DOUBLE || t == NC_FLOAT || t == NC_INT || t == NC_SHORT || t == NC_BYTE ||
                         t == NC_UINT || t == NC_USHORT || t == NC_UBYTE || t == NC_INT64 || t == NC_UINT64;
    if (text ? t != NC_STRING : !numeric) fail(name, text ? "must be strings" : "must be numbers");
    return v;
  }
  std::vector<double> doubles(const char* name, int dim) const {
    const int v = variable(name, {dim}, false);
    std::vector<double> out(length(dim));
    if (!out.empty()) check(nc_get_var_double(nc_.id, v, out.data()), path_, fmt::format("reading {}", name));
    return out;
  }
  std::vector<int> ints(const char* name, int dim) const {
    const int v = variable(name, {dim}, false);
    nc_type t = 0;
    nc_inq_vartype(nc_.id, v, &t);
    if (t == NC_DOUBLE || t == NC_FLOAT) fail(name, "must be whole numbers");
    std::vector<int> out(length(dim));
    if (!out.empty()) {
      const int status = nc_get_var_int(nc_.id, v, out.data());
      if (status == NC_ERANGE) fail(name, "has a value out of range");
      check(status, path_, fmt::format("reading {}", name));
    }
    return out;
  }
  std::vector<std::string> strings(const char* name, int dim, const char* what) const {
    const int v = variable(name, {dim}, true);
    std::vector<char*> p(length(dim), nullptr);
    if (!p.empty()) check(nc_get_var_string(nc_.id, v, p.data()), path_, fmt::format("reading {}", name));
    std::vector<std::string> out;
    for (char* s : p) out.emplace_back(s ? s : "");
    if (!p.empty()) nc_free_string(p.size(), p.data());
    (void)what;
    return out;
  }
  std::string textAttribute(const char* name, int var = NC_GLOBAL, const char* field = nullptr) const {
    const char* f = field ? field : name;
    nc_type t = 0;
    std::size_t len = 0;
    if (nc_inq_att(nc_.id, var, name, &t, &len) != NC_NOERR) fail(f, fmt::format("no attribute {}", name));
    if (t != NC_CHAR) fail(f, fmt::format("attribute {} must be text", name));
    std::string s(len, '\0');
    if (len > 0) check(nc_get_att_text(nc_.id, var, name, s.data()), path_, fmt::format("reading {}", name));
    while (!s.empty() && s.back() == '\0') s.pop_back();
    return s;
  }
  double doubleAttribute(const char* name) const {
    nc_type t = 0;
    std::size_t len = 0;
    if (nc_inq_att(nc_.id, NC_GLOBAL, name, &t, &len) != NC_NOERR) fail(name, "no such attribute");
    double v = 0;
    if (len != 1 || t == NC_CHAR || t == NC_STRING || nc_get_att_double(nc_.id, NC_GLOBAL, name, &v) != NC_NOERR)
      fail(name, "must be one number");
    return v;
  }

  fs::path path_;
  NcFile nc_;
};

}  // namespace

void writeStateFile(const fs::path& target, const SavedState& state, const StateFileOptions& options,
                    OutputCommit& into) {
  REACHWISE_ASSERT(state.reach_ids.size() == state.reaches.size());
  writeStaged(target, ".nc", [&](const fs::path& partial) { writeInto(partial, state, options); }, into);
}

SavedState readStateFile(const fs::path& path) { return Reader(path).read(); }

}  // namespace reachwise::io
