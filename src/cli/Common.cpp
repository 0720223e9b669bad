#include "Common.hpp"

#include <fmt/format.h>
#include <fmt/ostream.h>

#include <cmath>
#include <filesystem>
#include <new>
#include <ostream>

#include "Subcommand.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/ProblemsWriter.hpp"
#include "reachwise/network/Validation.hpp"

namespace reachwise::cli {

namespace {

std::string coordinate(double v) { return std::isfinite(v) ? fmt::format("{}", v) : "-"; }

}  // namespace

void requireExisting(const std::string& source) {
  const bool plain_path = source.find(':') == std::string::npos && source.rfind("/vsi", 0) != 0;
  if (!plain_path || std::filesystem::exists(source)) return;
  InputLocation at;
  at.file = source;
  throw InputError(at, "no such file or directory");
}

std::unique_ptr<LoadedNetwork> loadNetwork(const std::string& source, const std::string& layer,
                                           const std::string& config) {
  requireExisting(source);
  if (!config.empty()) requireExisting(config);
  io::ReadOptions read_options;
  if (!config.empty()) read_options.config = io::NetworkConfig::fromFile(config);
  read_options.layer = layer;
  auto net = std::make_unique<LoadedNetwork>();
  net->config = read_options.config;
  net->table = io::readNetwork(source, read_options, net->problems, &net->read);
  net->graph.emplace(net->table);
  network::mergeProblems(net->problems, network::validate(*net->graph));
  return net;
}

std::string problemLine(const network::Problem& p) {
  return fmt::format("{} {} {} {} ({}, {}): {}", io::severityName(p.severity), p.codeName(),
                     p.reach_id.empty() ? "-" : p.reach_id,
                     p.fid < 0 ? std::string("-") : std::to_string(p.fid), coordinate(p.x),
                     coordinate(p.y), p.message);
}

int guarded(std::ostream& err, const std::string& subject, const std::function<int()>& body) {
  try {
    return body();
  } catch (const InternalError& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  } catch (const Error& e) {
    fmt::print(err, "error: {}\n", e.what());
    return kExitInput;
  } catch (const std::bad_alloc&) {
    fmt::print(err, "error: out of memory while working on {}\n", subject);
    return kExitInput;
  } catch (const std::exception& e) {
    fmt::print(err, "internal error (please report): {}\n", e.what());
    return kExitBug;
  }
}

}  // namespace reachwise::cli
