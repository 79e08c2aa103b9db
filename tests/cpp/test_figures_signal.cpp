// Tests of the signal figures: spectra with mask verdicts, eye and constellation densities.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cctype>
#include <string>
#include <vector>

#include "qamsight/figures_signal.hpp"
#include "qamsight/modem.hpp"
#include "xml_check.hpp"

using namespace qamsight;
using qamsight::test::xml_problem;

namespace {

bool has_nan(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return std::tolower(c); });
  return s.find("nan") != std::string::npos;
}

void check_svg(const std::string& svg) {
  INFO(svg.substr(0, 300));
  CHECK(xml_problem(svg).empty());
  CHECK_FALSE(has_nan(svg));
  CHECK(svg.rfind("<svg", 0) == 0);
}

Spectrum noisy_tone_spectrum() {
  RandomStream rs(1, 0, Substream::awgn);
  std::vector<cf32> x(16384);
  rs.fill_complex_gaussian(x, 1e-4);
  for (std::size_t i = 0; i < x.size(); ++i) x[i] += std::polar(1.0f, 0.3f * static_cast<float>(i));
  WelchEstimator w({.fft_size = 512, .window = WindowKind::blackman_harris4, .sample_rate_hz = 4e6});
  w.add(x);
  return w.psd();
}

}  // namespace

TEST_CASE("the XML checker rejects malformed documents", "[figures_signal]") {
  CHECK(xml_problem("<svg a=\"1\" b='2'><g/>x &amp; &#38;<!-- c --></svg>").empty());
  CHECK_FALSE(xml_problem("<svg><g></svg>").empty());
  CHECK_FALSE(xml_problem("<svg><g></h></svg>").empty());
  CHECK_FALSE(xml_problem("<svg>a & b</svg>").empty());
  CHECK_FALSE(xml_problem("<svg a=\"<\"/>").empty());
  CHECK_FALSE(xml_problem("<svg a=\"1\" a=\"2\"/>").empty());
  CHECK_FALSE(xml_problem("<svg a=1/>").empty());
  CHECK_FALSE(xml_problem("<svg/><svg/>").empty());
  CHECK_FALSE(xml_problem("<svg>&nbsp;</svg>").empty());
  CHECK_FALSE(xml_problem("<svg>\x01</svg>").empty());
}

TEST_CASE("spectrum figure with a mask reports PASS or FAIL", "[figures_signal]") {
  const Spectrum s = noisy_tone_spectrum();
  // Tone at 0.3 rad/sample = 0.3/(2 pi) * 4 MHz = 191 kHz; noise floor ~ -100 dB/Hz.
  const std::string plain = spectrum_svg(s);
  check_svg(plain);
  CHECK(plain.find("RBW") != std::string::npos);
  CHECK(plain.find("mask") == std::string::npos);

  SpectrumFigureOptions o;
  o.mask = SpectralMask{.points = {{0, 3}, {1e5, 3}, {1e5, -60}, {2e6, -60}}, .center_hz = 191e3};
  const std::string pass = spectrum_svg(s, o);
  check_svg(pass);
  CHECK(pass.find("PASS") != std::string::npos);
  o.mask->points[2].limit_db = -120;  // below the noise floor: fails
  o.mask->points[3].limit_db = -120;
  o.relative_to_peak = true;
  o.frequency_shift_hz = 8.1e9;
  const std::string fail = spectrum_svg(s, o);
  check_svg(fail);
  CHECK(fail.find("FAIL") != std::string::npos);
  CHECK(fail.find("GHz") != std::string::npos);
  // Mask verdict of the figure equals mask_check.
  const MaskVerdict v = mask_check(s, *o.mask);
  CHECK_FALSE(v.pass);
}

TEST_CASE("figures of empty accumulators are well formed", "[figures_signal]") {
  WelchEstimator w({.fft_size = 64});
  check_svg(spectrum_svg(w.psd()));
  SpectrumFigureOptions o;
  o.mask = SpectralMask{.points = {{0, 0}, {0.5, -40}}};
  check_svg(spectrum_svg(w.power_per_bin(), o));
  EyeDiagram eye({});
  check_svg(eye_svg(eye));
  check_svg(eye_svg(eye, {.component = EyeComponent::quadrature}));
  check_svg(constellation_svg(ConstellationDensity({})));
}

TEST_CASE("eye and constellation figures", "[figures_signal]") {
  const Constellation c = Constellation::from_name("16qam");
  std::vector<std::uint32_t> labels(3000);
  RandomStream(2, 0, Substream::payload).fill_labels(labels, 4);
  std::vector<cf32> s(labels.size()), r(labels.size()), noise(labels.size());
  c.map_labels(labels, s);
  RandomStream(2, 0, Substream::awgn).fill_complex_gaussian(noise, 0.01);
  for (std::size_t i = 0; i < s.size(); ++i) r[i] = s[i] + noise[i];

  ConstellationDensity d({.bins = 80, .extent = 1.4});
  d.add(r);
  ConstellationFigureOptions co;
  co.reference_points.assign(c.points().begin(), c.points().end());
  co.error_vectors = {{r[0], s[0]}, {r[1], s[1]}, {cf32(5.0f, 5.0f), s[2]}};  // one far outside
  const std::string cs = constellation_svg(d, co);
  check_svg(cs);
  CHECK(cs.find("-heatmap") != std::string::npos);
  CHECK(cs.find("ideal points") != std::string::npos);

  // Eye of the symbols held for 4 samples each (a staircase) with linear interpolation.
  std::vector<cf32> x;
  for (const cf32& v : r)
    for (int k = 0; k < 4; ++k) x.push_back(v);
  EyeDiagram eye({.samples_per_symbol = 4, .decision_offset = 1.5});
  eye.add(x);
  const std::string es = eye_svg(eye, {.component = EyeComponent::quadrature});
  check_svg(es);
  CHECK(es.find("quadrature") != std::string::npos);
  CHECK_THROWS_AS(eye_svg(EyeDiagram({.quadrature = false}), {.component = EyeComponent::quadrature}),
                  ConfigError);
  CHECK_THROWS_AS(eye_svg(eye, {.density_decades = 0.0}), ConfigError);
}
