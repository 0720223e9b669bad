// Fuzz target: the TOML run file, every table a command reads from it
// ([network], [route], [prepare], [calibrate]).

#include <cstdint>
#include <string>

#include "FuzzSupport.hpp"
#include "reachwise/io/CalibrateConfig.hpp"
#include "reachwise/io/NetworkConfig.hpp"
#include "reachwise/io/PrepareConfig.hpp"
#include "reachwise/io/RouteConfig.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  const std::string origin = "fuzz.toml";
  using reachwise::fuzz::refusalIsFine;
  refusalIsFine([&] { (void)reachwise::io::NetworkConfig::fromString(text, origin); });
  refusalIsFine([&] { (void)reachwise::io::RouteConfig::fromString(text, origin); });
  refusalIsFine([&] { (void)reachwise::io::PrepareConfig::fromString(text, origin); });
  refusalIsFine([&] { (void)reachwise::io::CalibrateConfig::fromString(text, origin); });
  return 0;
}
