// Every file reader of the library, by name: the one list that the fuzz harnesses, their replay
// tests and the bad-input probe share (add a reader here, a corpus folder, and a matrix row).
#pragma once

#include <sys/mman.h>
#include <unistd.h>

#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

#include <cstdlib>
#include <fstream>

#include "qamsight/channel.hpp"
#include "qamsight/checkpoint.hpp"
#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"
#include "qamsight/fec.hpp"
#include "qamsight/io.hpp"
#include "qamsight/link.hpp"
#include "qamsight/sigmf.hpp"
#include "qamsight/waveform.hpp"

namespace qamsight::fuzz {

/// A reader: parses `text` that came from `source` and returns a one-line summary of what it
/// read. Bad input throws InputError (or ConfigError); anything else is a bug.
struct Reader {
  const char* name;
  std::string (*parse)(std::string_view text, const std::string& source);
  /// The library's own file entry point where it has one (else: read the file, then parse).
  std::string (*read_path)(const std::string& path) = nullptr;
};

namespace detail {

inline std::string sigmf_summary(const Recording& r) {
  const auto w = waveform_description(r);  // the qamsight:* keys are read from files too
  return std::to_string(r.samples.size()) + " samples of " + r.datatype.name() + (w ? ", with a waveform" : "");
}

// PhaseNoiseMask reads only from a path: hand it the bytes through an anonymous memory file.
inline std::string phase_noise_mask_from_text(std::string_view text, const std::string& source) {
  const int fd = ::memfd_create("qamsight-mask", MFD_CLOEXEC);
  if (fd < 0) return "memfd_create failed; input skipped";
  std::size_t done = 0;
  while (done < text.size()) {
    const ssize_t w = ::write(fd, text.data() + done, text.size() - done);
    if (w <= 0) break;
    done += static_cast<std::size_t>(w);
  }
  (void)source;
  const std::string path = "/proc/self/fd/" + std::to_string(fd);
  struct Closer {
    int fd;
    ~Closer() { ::close(fd); }
  } closer{fd};
  const PhaseNoiseMask mask = PhaseNoiseMask::from_csv(path);
  return std::to_string(mask.points().size()) + " mask points, rms phase " + format_number(mask.rms_phase_deg()) +
         " deg";
}

// read_sigmf reads a metadata file and its data file by name: the metadata goes to a private
// folder beside 64 fixed samples (cf32_le zeros, 512 bytes), then the recording is read.
inline std::string sigmf_from_text(std::string_view text, const std::string& source) {
  static const std::string dir = [] {
    char tmpl[] = "/tmp/qamsight-fuzz-sigmf-XXXXXX";
    const char* d = ::mkdtemp(tmpl);
    const std::string name = d ? d : "/tmp";
    std::ofstream(name + "/r.sigmf-data", std::ios::binary) << std::string(512, '\0');
    return name;
  }();
  (void)source;
  std::ofstream(dir + "/r.sigmf-meta", std::ios::binary | std::ios::trunc) << text;
  return sigmf_summary(read_sigmf(dir + "/r"));
}

}  // namespace detail

inline const std::vector<Reader>& readers() {
  static const std::vector<Reader> list = {
      {"sweep_json",
       [](std::string_view t, const std::string& s) {
         const SweepResult r = sweep_from_json(t, s);
         return std::to_string(r.points.size()) + " sweep points";
       }},
      {"link_scenario",
       [](std::string_view t, const std::string& s) {
         const LinkScenario sc = parse_link_scenario(t, s);
         return "scenario '" + sc.name + "' with " + std::to_string(sc.modcods.rows().size()) + " MODCODs";
       },
       [](const std::string& path) {
         return "scenario '" + load_link_scenario(path).name + "'";
       }},
      {"modcod_csv",
       [](std::string_view t, const std::string& s) {
         return std::to_string(ModcodTable::from_csv(t, s).rows().size()) + " MODCODs";
       }},
      {"modcod_json",
       [](std::string_view t, const std::string& s) {
         return std::to_string(ModcodTable::from_json(t, s).rows().size()) + " MODCODs";
       }},
      {"phase_noise_mask", detail::phase_noise_mask_from_text,
       [](const std::string& path) {
         return std::to_string(PhaseNoiseMask::from_csv(path).points().size()) + " mask points";
       }},
      {"alist",
       [](std::string_view t, const std::string& s) {
         const ParityCheckMatrix h = ParityCheckMatrix::parse_alist(t, s);
         return std::to_string(h.rows()) + " x " + std::to_string(h.cols()) + " parity-check matrix";
       },
       [](const std::string& path) {
         const ParityCheckMatrix h = ParityCheckMatrix::read_alist(path);
         return std::to_string(h.rows()) + " x " + std::to_string(h.cols()) + " parity-check matrix";
       }},
      {"sigmf_meta", detail::sigmf_from_text,
       [](const std::string& path) { return detail::sigmf_summary(read_sigmf(path)); }},
      {"evm_lineup",
       [](std::string_view t, const std::string& s) {
         const EvmLineupFile f = parse_evm_lineup(t, s, ".");
         return "EVM line-up '" + f.source + "'";
       },
       [](const std::string& path) { return "EVM line-up '" + load_evm_lineup(path).source + "'"; }},
      {"evm_limit",
       [](std::string_view t, const std::string&) {
         return "EVM limit " + format_number(parse_evm_limit(t).pct) + " %";
       }},
      {"checkpoint",
       [](std::string_view t, const std::string& s) {
         const CheckpointContents c = parse_checkpoint(t, s);
         return std::to_string(c.points) + " points, " + std::to_string(c.records) + " records";
       }},
  };
  return list;
}

inline const Reader* find_reader(std::string_view name) {
  for (const auto& r : readers())
    if (name == r.name) return &r;
  return nullptr;
}

}  // namespace qamsight::fuzz
