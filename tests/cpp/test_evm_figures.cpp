// Tests of the EVM figures: constellation with error vectors and EVM per symbol.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cctype>
#include <string>
#include <vector>

#include "qamsight/evm.hpp"
#include "qamsight/modem.hpp"
#include "xml_check.hpp"

using namespace qamsight;
using qamsight::test::xml_problem;

namespace {

bool has_nan(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return std::tolower(c); });
  return s.find("nan") != std::string::npos;
}

std::size_t count(const std::string& s, const std::string& what) {
  std::size_t n = 0;
  for (auto p = s.find(what); p != std::string::npos; p = s.find(what, p + 1)) ++n;
  return n;
}

// A hand-made measurement: QPSK references, every error vector 0.05 (5 % of the unit RMS
// point amplitude) except one of 0.3 at symbol `peak`: RMS and peak are known without the
// measurement code.
EvmMeasurement synthetic(std::size_t n, std::size_t peak) {
  const Constellation c = Constellation::from_name("qpsk");
  EvmMeasurement m;
  m.symbols = n;
  double sum = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const cf64 s = c.points()[i % 4];
    const cf64 e = (i == peak ? 0.3 : 0.05) * std::polar(1.0, 0.7 * static_cast<double>(i));
    m.references.push_back(cf32(s));
    m.error_vectors.push_back(cf32(e));
    m.corrected.push_back(cf32(s + e));
    sum += std::norm(e);
  }
  m.rms = std::sqrt(sum / static_cast<double>(n));
  m.rms_pct = 100.0 * m.rms;
  m.rms_db = 20.0 * std::log10(m.rms);
  m.peak_pct = 30.0;
  m.peak_index = peak;
  return m;
}

}  // namespace

TEST_CASE("EVM figures are well-formed and name the peak and the RMS", "[evm_figures]") {
  const Constellation c = Constellation::from_name("qpsk");
  const EvmMeasurement m = synthetic(1000, 417);
  const std::string a = evm_constellation_svg(m, c, {});
  const std::string b = evm_symbols_svg(m, {.limit_pct = 8.0});
  for (const auto* svg : {&a, &b}) {
    INFO(svg->substr(0, 300));
    CHECK(xml_problem(*svg).empty());
    CHECK_FALSE(has_nan(*svg));
    CHECK(svg->rfind("<svg", 0) == 0);
    // The peak is the hand-placed 0.3 error at symbol 417: 30 % of the unit RMS amplitude.
    CHECK(svg->find("symbol 417") != std::string::npos);
  }
  // RMS of 999 errors of 0.05 and one of 0.3: sqrt((999 * 0.0025 + 0.09) / 1000) = 5.0869 %.
  CHECK(b.find("RMS EVM 5.09 %") != std::string::npos);
  CHECK(b.find("limit 8.00 %") != std::string::npos);
  CHECK(a.find("5.09 %") != std::string::npos);
}

TEST_CASE("EVM figures thin long captures but keep the peak", "[evm_figures]") {
  const Constellation c = Constellation::from_name("qpsk");
  const EvmMeasurement m = synthetic(200000, 123457);
  const std::string a = evm_constellation_svg(m, c, {.max_points = 500, .max_vectors = 50});
  const std::string b = evm_symbols_svg(m, {.max_points = 500});
  CHECK(xml_problem(a).empty());
  CHECK(xml_problem(b).empty());
  CHECK(a.find("501 of 200000 symbols drawn") != std::string::npos);  // 500 evenly spaced + the peak
  CHECK(b.find("501 of 200000 symbols drawn") != std::string::npos);
  CHECK(a.find("error vectors (51)") != std::string::npos);
  CHECK(a.size() < 400000);
  CHECK(b.size() < 400000);
  CHECK(b.find("symbol 123457") != std::string::npos);
  CHECK(count(b, "<circle") < 2000);
}

TEST_CASE("EVM figures refuse measurements without error vectors", "[evm_figures]") {
  const Constellation c = Constellation::from_name("qpsk");
  EvmMeasurement m = synthetic(100, 3);
  m.error_vectors.clear();
  CHECK_THROWS_AS(evm_constellation_svg(m, c), ConfigError);
  CHECK_THROWS_AS(evm_symbols_svg(m), ConfigError);
  const EvmMeasurement ok = synthetic(100, 3);
  CHECK_THROWS_AS(evm_symbols_svg(ok, {.max_points = 10}), ConfigError);
}
