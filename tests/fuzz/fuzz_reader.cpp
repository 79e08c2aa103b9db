// libFuzzer harness of one file reader (chosen at build time by QAMSIGHT_FUZZ_READER): bad
// input must end in InputError or ConfigError; any other exception, a crash, a leak or
// undefined behaviour is a finding.
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "readers.hpp"

#ifndef QAMSIGHT_FUZZ_READER
#error "define QAMSIGHT_FUZZ_READER to the name of a reader in readers.hpp"
#endif

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const qamsight::fuzz::Reader* reader = [] {
    const auto* r = qamsight::fuzz::find_reader(QAMSIGHT_FUZZ_READER);
    if (!r) std::abort();
    return r;
  }();
  if (size > (std::size_t{1} << 20)) return 0;  // readers take files of human size
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  try {
    (void)reader->parse(text, "fuzz-input");
  } catch (const qamsight::InputError&) {
  } catch (const qamsight::ConfigError&) {
  }
  return 0;
}
