// Fuzz target: the ISO 8601 time parser (io/IsoTime.hpp) on any text, and
// the round trip of what it accepts through the formatter.

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <string_view>

#include "FuzzSupport.hpp"
#include "reachwise/io/IsoTime.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  reachwise::fuzz::refusalIsFine([&] {
    const reachwise::io::IsoTime t = reachwise::io::parseIsoTime(text);
    if (!(t.fraction_s >= 0.0 && t.fraction_s < 1.0)) {
      std::fprintf(stderr, "fuzz: fraction %.17g outside [0, 1)\n", t.fraction_s);
      std::abort();
    }
    // An accepted instant written back (whole seconds, the same offset) reads
    // as the same instant and offset: the formatter and the parser agree
    // (IsoTime.hpp: exact for any int64 in the years 0000-9999).
    const std::string back = reachwise::io::formatIsoTime(t.unix_s, t.utc_offset_min);
    const reachwise::io::IsoTime again = reachwise::io::parseIsoTime(back);
    if (again.unix_s != t.unix_s || again.utc_offset_min != t.utc_offset_min || again.fraction_s != 0.0) {
      std::fprintf(stderr, "fuzz: round trip of %lld (offset %d) gave '%s' -> %lld (offset %d)\n",
                   static_cast<long long>(t.unix_s), t.utc_offset_min, back.c_str(),
                   static_cast<long long>(again.unix_s), again.utc_offset_min);
      std::abort();
    }
    (void)reachwise::io::formatIsoTime(t.seconds(), t.utc_offset_min, 3);
  });
  return 0;
}
