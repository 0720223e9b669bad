#include "reachwise/run/Synthetic.hpp"

#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/SyntheticWriter.hpp"
#include "reachwise/version.hpp"

namespace reachwise::run {

SyntheticCase::SyntheticCase(SyntheticRequest request) : request_(std::move(request)) {
  const SyntheticRequest& r = request_;
  io::refuseOutputOverInput({{"OUT", r.gpkg}, {"--lateral", r.lateral_nc}, {"--inflow", r.inflow_csv}}, {});
  io::refuseExisting(r.gpkg, r.overwrite);
  if (!r.lateral_nc.empty()) io::refuseExisting(r.lateral_nc, r.overwrite);
  if (!r.inflow_csv.empty()) io::refuseExisting(r.inflow_csv, r.overwrite);
  if (!r.lateral_nc.empty() || !r.inflow_csv.empty())  // throws InvalidParameter naming what is wrong
    (void)routing::TimeAxis::make(r.axis.start_unix_s, r.axis.dt_s, r.axis.steps, r.axis.utc_offset_min);
  net_ = network::generateSyntheticNetwork({r.reaches, r.outlets, r.seed});
  lakes_ = network::syntheticLakes(net_, r.lakes, r.seed);
  storm_.seed = r.seed;
}

void SyntheticCase::writeNetwork(io::OutputCommit* into) const {
  io::writeSyntheticGpkg(request_.gpkg, net_, {"reaches", 32633, request_.overwrite}, lakes_, into);
}

void SyntheticCase::writeLateral(io::OutputCommit* into) const {
  if (request_.lateral_nc.empty()) return;
  io::ForcingNetcdfOptions nc;
  nc.title = "reachwise synthetic lateral inflow";
  nc.source = std::string("reachwise ") + kVersion + " (" + kGitHash + ")";
  nc.history = request_.history;
  nc.single_precision = true;  // 7 digits are ample for a made-up storm; half the bytes to read
  io::writeSyntheticLateralNetcdf(request_.lateral_nc, net_, storm_, request_.axis, request_.overwrite, nc, into);
}

void SyntheticCase::writeInflow(io::OutputCommit* into) const {
  if (request_.inflow_csv.empty()) return;
  io::writeSyntheticInflowCsv(request_.inflow_csv, net_, storm_, request_.axis, request_.overwrite, into);
}

}  // namespace reachwise::run
