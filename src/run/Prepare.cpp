#include "reachwise/run/Prepare.hpp"

#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/PreparedWriter.hpp"

namespace reachwise::run {

PrepareSummary prepare(const PrepareRequest& request) {
  requireExisting(request.dem);
  io::refuseOutputOverInput({{"--out", request.out}}, {{"NETWORK", request.network.path},
                                                      {"--config", request.network.config},
                                                      {"--dem", request.dem}});
  io::refuseExisting(request.out, request.overwrite);
  io::requireParentFolder(request.out);
  NetworkSource source = request.network;
  source.dem = request.dem;
  const auto net = loadNetwork(source);
  if (net->lakes) {
    // The lines are written as built; lakes join the network when routed.
    InputLocation at;
    at.file = request.network.config;
    at.field = "network.lakes";
    throw InputError(at, "prepare writes the lines as they are; give the lakes to route on the prepared layer");
  }
  if (!net->derived) throw NetworkHasErrors(net->problems, net->table.geographic);  // a cycle: no flow order
  PrepareSummary s;
  static_cast<DerivationSummary&>(s) = net->derived->summary;
  s.reaches = net->graph->size();
  s.problems = net->problems;
  s.geographic = net->table.geographic;
  io::writePreparedGeoPackage(request.out, request.overwrite, *net->graph, net->config, net->derived->reaches,
                              s.problems);
  return s;
}

}  // namespace reachwise::run
