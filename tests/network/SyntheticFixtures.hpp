#pragma once
// Test support: a synthetic network by size, seed and number of basins.

#include <cstddef>
#include <cstdint>

#include "reachwise/network/SyntheticNetwork.hpp"

namespace synthfixture {

inline reachwise::network::SyntheticNetwork make(std::size_t n, std::uint64_t seed, std::size_t outlets = 1) {
  reachwise::network::SyntheticOptions o;
  o.reaches = n;
  o.seed = seed;
  o.outlets = outlets;
  return reachwise::network::generateSyntheticNetwork(o);
}

}  // namespace synthfixture
