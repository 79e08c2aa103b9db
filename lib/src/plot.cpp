// plot: SVG rendering of figures: ticks, layout, clipping, legend placement and the atomic writer.
#include "qamsight/plot.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <random>
#include <system_error>
#include <utility>

namespace qamsight {
namespace detail {
namespace {

using plot::Anchor;
using plot::Axis;
using plot::Color;
using plot::Dash;
using plot::LegendPlace;
using plot::Marker;
using plot::Scale;
using plot::Style;

// ---------------------------------------------------------------------------------------------
// Typography. Sizes in px.
// ---------------------------------------------------------------------------------------------
constexpr double kTitleSize = 16.0;
constexpr double kLabelSize = 14.0;
constexpr double kTickSize = 12.5;
constexpr double kLegendSize = 12.5;
constexpr double kValueSize = 12.0;
constexpr double kPad = 10.0;
constexpr double kTickLen = 5.0;
constexpr double kMinorLen = 3.0;
constexpr double kSupScale = 0.72;  // script size relative to the base text
constexpr double kSupRaise = 0.40;  // superscript baseline shift, in base em
constexpr double kSubLower = 0.20;
constexpr const char* kFontFamily = "'DejaVu Sans', Verdana, sans-serif";
constexpr const char* kInk = "#222222";    // text
constexpr const char* kFrame = "#444444";  // frame and ticks
constexpr const char* kGrid = "#dedede";
constexpr const char* kMinorGrid = "#f0f0f0";

// Advance widths of DejaVu Sans Book (units of 1/1000 em) for ASCII 32..126, read from the
// font's hmtx table. Verdana has nearly the same metrics, Arial and Helvetica are narrower,
// so widths estimated from this table are upper bounds on the usual fallbacks.
constexpr std::array<std::uint16_t, 95> kAsciiWidth = {
    318, 401, 460, 838, 636, 950, 780, 275, 390, 390, 500, 838, 318, 361,  318, 337, 636, 636, 636,
    636, 636, 636, 636, 636, 636, 636, 337, 337, 838, 838, 838, 531, 1000, 684, 686, 698, 770, 632,
    575, 775, 752, 295, 295, 656, 557, 863, 748, 787, 603, 787, 695, 635,  611, 732, 684, 989, 685,
    611, 685, 390, 337, 390, 838, 500, 500, 613, 635, 550, 635, 615, 352,  635, 634, 278, 278, 579,
    278, 974, 634, 612, 635, 635, 411, 521, 392, 634, 592, 818, 592, 592,  525, 636, 337, 636, 838};

// Decodes one UTF-8 code point at s[i]; returns the length consumed, or 0 if the bytes are
// not well-formed UTF-8 (overlong forms, surrogates and values above U+10FFFF included).
std::size_t decode_utf8(std::string_view s, std::size_t i, char32_t& cp) {
  const auto b = [&](std::size_t k) { return static_cast<unsigned char>(s[i + k]); };
  const unsigned char b0 = b(0);
  if (b0 < 0x80) {
    cp = b0;
    return 1;
  }
  const auto cont = [&](std::size_t k) { return i + k < s.size() && (b(k) & 0xC0) == 0x80; };
  if (b0 >= 0xC2 && b0 <= 0xDF && cont(1)) {
    cp = (char32_t(b0 & 0x1F) << 6) | (b(1) & 0x3F);
    return 2;
  }
  if (b0 >= 0xE0 && b0 <= 0xEF && cont(1) && cont(2)) {
    cp = (char32_t(b0 & 0x0F) << 12) | (char32_t(b(1) & 0x3F) << 6) | (b(2) & 0x3F);
    if (cp < 0x800 || (cp >= 0xD800 && cp <= 0xDFFF)) return 0;
    return 3;
  }
  if (b0 >= 0xF0 && b0 <= 0xF4 && cont(1) && cont(2) && cont(3)) {
    cp = (char32_t(b0 & 0x07) << 18) | (char32_t(b(1) & 0x3F) << 12) | (char32_t(b(2) & 0x3F) << 6) |
         (b(3) & 0x3F);
    if (cp < 0x10000 || cp > 0x10FFFF) return 0;
    return 4;
  }
  return 0;
}

// Text that XML 1.0 accepts: well-formed UTF-8 without control characters. Line breaks and
// tabs become spaces (SVG text is one line), other controls are dropped, malformed bytes
// and the non-characters U+FFFE/U+FFFF become U+FFFD.
std::string clean_text(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  for (std::size_t i = 0; i < s.size();) {
    char32_t cp = 0;
    const std::size_t n = decode_utf8(s, i, cp);
    if (n == 0 || cp == 0xFFFE || cp == 0xFFFF) {
      out += "\xEF\xBF\xBD";
      i += (n == 0) ? 1 : n;
      continue;
    }
    if (cp < 0x20) {
      if (cp == '\t' || cp == '\n' || cp == '\r') out += ' ';
    } else {
      out.append(s.substr(i, n));
    }
    i += n;
  }
  return out;
}

void append_escaped(std::string& out, std::string_view s) {
  for (char ch : s) {
    switch (ch) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += ch;
    }
  }
}

double char_width_em(char32_t cp) {
  if (cp >= 32 && cp <= 126) return kAsciiWidth[cp - 32] / 1000.0;
  switch (cp) {
    case 0x00B0:
      return 0.500;  // degree sign
    case 0x00B5:
      return 0.636;  // micro sign
    case 0x00D7:
      return 0.838;  // multiplication sign
    case 0x2212:
      return 0.838;  // minus sign
    case 0x2013:
      return 0.500;
    case 0x2014:
      return 1.000;
    case 0x2264:
    case 0x2265:
      return 0.838;
    default:
      break;
  }
  if (cp >= 0x0370 && cp <= 0x03FF) return 0.62;  // Greek
  if (cp >= 0x2E80) return 1.0;                   // CJK and wider
  return 0.65;
}

double plain_width(std::string_view utf8, double size) {
  double em = 0.0;
  for (std::size_t i = 0; i < utf8.size();) {
    char32_t cp = 0;
    const std::size_t n = decode_utf8(utf8, i, cp);
    em += n ? char_width_em(cp) : 0.65;
    i += n ? n : 1;
  }
  return em * size;
}

// Text with the ^{...} / _{...} markup split into runs; level +1 raised, -1 lowered.
struct Run {
  std::string text;
  int level = 0;
};

std::vector<Run> parse_runs(const std::string& raw) {
  const std::string s = clean_text(raw);
  std::vector<Run> runs;
  std::string plain;
  for (std::size_t i = 0; i < s.size();) {
    if ((s[i] == '^' || s[i] == '_') && i + 1 < s.size() && s[i + 1] == '{') {
      const std::size_t close = s.find('}', i + 2);
      if (close != std::string::npos && s.find('{', i + 2) > close) {
        if (!plain.empty()) runs.push_back({std::move(plain), 0});
        plain.clear();
        runs.push_back({s.substr(i + 2, close - i - 2), s[i] == '^' ? 1 : -1});
        i = close + 1;
        continue;
      }
    }
    plain += s[i++];
  }
  if (!plain.empty()) runs.push_back({std::move(plain), 0});
  return runs;
}

double text_width(const std::string& s, double size, bool bold = false) {
  double w = 0.0;
  for (const Run& r : parse_runs(s)) w += plain_width(r.text, r.level ? size * kSupScale : size);
  return bold ? 1.09 * w : w;
}

bool has_script(const std::string& s) {
  for (const Run& r : parse_runs(s))
    if (r.level != 0) return true;
  return false;
}

// ---------------------------------------------------------------------------------------------
// Numbers.
// ---------------------------------------------------------------------------------------------

// Coordinates with two decimals (1/100 px), trailing zeros trimmed. Only finite values reach
// this point: the layers filter and clip before they write.
void append_num(std::string& out, double v) {
  QAMSIGHT_ASSERT(std::isfinite(v), "plot: non-finite coordinate");
  double r = std::round(v * 100.0) / 100.0;
  if (r == 0.0) r = 0.0;  // no "-0"
  char buf[64];
  const auto res = std::to_chars(buf, buf + sizeof buf, r, std::chars_format::fixed, 2);
  char* end = res.ptr;
  while (end > buf && end[-1] == '0') --end;
  if (end > buf && end[-1] == '.') --end;
  out.append(buf, end);
}

std::string num(double v) {
  std::string s;
  append_num(s, v);
  return s;
}

// Appends text pieces and numbers (as coordinates) to an SVG string.
inline void put_one(std::string& s, double v) { append_num(s, v); }
inline void put_one(std::string& s, std::string_view v) { s.append(v); }
inline void put_one(std::string& s, const char* v) { s.append(v); }
inline void put_one(std::string& s, const std::string& v) { s.append(v); }
template <class... A>
void put(std::string& s, const A&... a) {
  (put_one(s, a), ...);
}

// The double nearest to 10^k (from_chars rounds correctly).
double pow10_exact(int k) {
  const std::string s = "1e" + std::to_string(k);
  double v = 0.0;
  std::from_chars(s.data(), s.data() + s.size(), v);
  return v;
}

// The double nearest to the decimal n * 10^e, for |n| < 2^53: one correctly rounded
// operation on exact operands while 10^|e| is exact (|e| <= 22).
double decimal_value(long long n, int e) {
  if (e >= 0 && e <= 22) return static_cast<double>(n) * pow10_exact(e);
  if (e < 0 && e >= -22) return static_cast<double>(n) / pow10_exact(-e);
  const std::string s = std::to_string(n) + "e" + std::to_string(e);
  double v = 0.0;
  std::from_chars(s.data(), s.data() + s.size(), v);
  return v;
}

const std::string kMinus = "\xE2\x88\x92";  // U+2212, the typographic minus of labels

std::string with_minus(std::string s) {
  if (!s.empty() && s[0] == '-') s = kMinus + s.substr(1);
  return s;
}

// "2.5e+06" -> "2.5e6", "1e-05" -> "1e-5".
std::string tidy_exponent(const std::string& s) {
  const std::size_t e = s.find('e');
  if (e == std::string::npos) return s;
  std::string mant = s.substr(0, e);
  std::string ex = s.substr(e + 1);
  bool neg = false;
  if (!ex.empty() && (ex[0] == '+' || ex[0] == '-')) {
    neg = ex[0] == '-';
    ex = ex.substr(1);
  }
  while (ex.size() > 1 && ex[0] == '0') ex = ex.substr(1);
  return mant + "e" + (neg ? "-" : "") + ex;
}

// Bar values round half away from zero (12.25 -> "12.3"), as people round by hand.
std::string value_label(double v, int decimals) {
  const double scale = std::pow(10.0, decimals);
  const double r = std::round(v * scale) / scale;
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, std::isfinite(r) ? r : v);
  std::string s = buf;
  if (s.find_first_not_of("-0.") == std::string::npos) s = s.substr(s[0] == '-' ? 1 : 0);
  return with_minus(s);
}

std::string fixed_label(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  std::string s = buf;
  // A value that rounds to zero is written without a sign.
  if (s.find_first_not_of("-0.") == std::string::npos) s = s.substr(s[0] == '-' ? 1 : 0);
  return with_minus(s);
}

std::string sci_label(double v, int step_exp) {
  if (v == 0.0) return "0";
  const int ev = static_cast<int>(std::floor(std::log10(std::fabs(v)) + 1e-12));
  const int digits = std::clamp(ev - step_exp, 0, 15);
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*e", digits, v);
  std::string s = buf;
  // Shortest mantissa: "1.0e6" -> "1e6".
  const std::size_t e = s.find('e');
  std::size_t end = e;
  if (s.find('.') < e) {
    while (s[end - 1] == '0') --end;
    if (s[end - 1] == '.') --end;
  }
  s = s.substr(0, end) + s.substr(e);
  return with_minus(tidy_exponent(s));
}

// Shortest plain form, for labels of single ticks such as 2, 0.3 or 5e-7.
std::string short_label(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return with_minus(tidy_exponent(buf));
}

}  // namespace
}  // namespace detail

// ---------------------------------------------------------------------------------------------
// Colours.
// ---------------------------------------------------------------------------------------------
namespace plot {

std::string Color::hex() const {
  char buf[8];
  std::snprintf(buf, sizeof buf, "#%02x%02x%02x", r, g, b);
  return buf;
}

Color color_from_hex(std::string_view hex) {
  const auto bad = [&] {
    return ConfigError("color", std::string(hex), "#rrggbb or #rgb with hexadecimal digits");
  };
  if (hex.empty() || hex[0] != '#' || (hex.size() != 7 && hex.size() != 4)) throw bad();
  const auto digit = [&](char ch) -> int {
    if (ch >= '0' && ch <= '9') return ch - '0';
    if (ch >= 'a' && ch <= 'f') return ch - 'a' + 10;
    if (ch >= 'A' && ch <= 'F') return ch - 'A' + 10;
    throw bad();
  };
  std::array<int, 3> c{};
  for (int k = 0; k < 3; ++k) {
    if (hex.size() == 7) {
      c[k] = 16 * digit(hex[1 + 2 * k]) + digit(hex[2 + 2 * k]);
    } else {
      c[k] = 17 * digit(hex[1 + k]);
    }
  }
  return {static_cast<std::uint8_t>(c[0]), static_cast<std::uint8_t>(c[1]), static_cast<std::uint8_t>(c[2])};
}

Color palette_color(std::size_t index) noexcept {
  static constexpr std::array<Color, 7> kPalette = {{
      {0x00, 0x72, 0xB2},  // blue
      {0xD5, 0x5E, 0x00},  // vermillion
      {0x00, 0x9E, 0x73},  // bluish green
      {0xCC, 0x79, 0xA7},  // reddish purple
      {0xE6, 0x9F, 0x00},  // orange
      {0x56, 0xB4, 0xE9},  // sky blue
      {0x00, 0x00, 0x00},  // black
  }};
  return kPalette[index % kPalette.size()];
}

Color viridis(double t) noexcept {
  // The 256-entry viridis table as published with matplotlib (CC0), rounded to 8 bits.
  static constexpr std::array<std::uint32_t, 256> kViridis = {
      0x440154, 0x440256, 0x450457, 0x450559, 0x46075a, 0x46085c, 0x460a5d, 0x460b5e, 0x470d60, 0x470e61,
      0x471063, 0x471164, 0x471365, 0x481467, 0x481668, 0x481769, 0x48186a, 0x481a6c, 0x481b6d, 0x481c6e,
      0x481d6f, 0x481f70, 0x482071, 0x482173, 0x482374, 0x482475, 0x482576, 0x482677, 0x482878, 0x482979,
      0x472a7a, 0x472c7a, 0x472d7b, 0x472e7c, 0x472f7d, 0x46307e, 0x46327e, 0x46337f, 0x463480, 0x453581,
      0x453781, 0x453882, 0x443983, 0x443a83, 0x443b84, 0x433d84, 0x433e85, 0x423f85, 0x424086, 0x424186,
      0x414287, 0x414487, 0x404588, 0x404688, 0x3f4788, 0x3f4889, 0x3e4989, 0x3e4a89, 0x3e4c8a, 0x3d4d8a,
      0x3d4e8a, 0x3c4f8a, 0x3c508b, 0x3b518b, 0x3b528b, 0x3a538b, 0x3a548c, 0x39558c, 0x39568c, 0x38588c,
      0x38598c, 0x375a8c, 0x375b8d, 0x365c8d, 0x365d8d, 0x355e8d, 0x355f8d, 0x34608d, 0x34618d, 0x33628d,
      0x33638d, 0x32648e, 0x32658e, 0x31668e, 0x31678e, 0x31688e, 0x30698e, 0x306a8e, 0x2f6b8e, 0x2f6c8e,
      0x2e6d8e, 0x2e6e8e, 0x2e6f8e, 0x2d708e, 0x2d718e, 0x2c718e, 0x2c728e, 0x2c738e, 0x2b748e, 0x2b758e,
      0x2a768e, 0x2a778e, 0x2a788e, 0x29798e, 0x297a8e, 0x297b8e, 0x287c8e, 0x287d8e, 0x277e8e, 0x277f8e,
      0x27808e, 0x26818e, 0x26828e, 0x26828e, 0x25838e, 0x25848e, 0x25858e, 0x24868e, 0x24878e, 0x23888e,
      0x23898e, 0x238a8d, 0x228b8d, 0x228c8d, 0x228d8d, 0x218e8d, 0x218f8d, 0x21908d, 0x21918c, 0x20928c,
      0x20928c, 0x20938c, 0x1f948c, 0x1f958b, 0x1f968b, 0x1f978b, 0x1f988b, 0x1f998a, 0x1f9a8a, 0x1e9b8a,
      0x1e9c89, 0x1e9d89, 0x1f9e89, 0x1f9f88, 0x1fa088, 0x1fa188, 0x1fa187, 0x1fa287, 0x20a386, 0x20a486,
      0x21a585, 0x21a685, 0x22a785, 0x22a884, 0x23a983, 0x24aa83, 0x25ab82, 0x25ac82, 0x26ad81, 0x27ad81,
      0x28ae80, 0x29af7f, 0x2ab07f, 0x2cb17e, 0x2db27d, 0x2eb37c, 0x2fb47c, 0x31b57b, 0x32b67a, 0x34b679,
      0x35b779, 0x37b878, 0x38b977, 0x3aba76, 0x3bbb75, 0x3dbc74, 0x3fbc73, 0x40bd72, 0x42be71, 0x44bf70,
      0x46c06f, 0x48c16e, 0x4ac16d, 0x4cc26c, 0x4ec36b, 0x50c46a, 0x52c569, 0x54c568, 0x56c667, 0x58c765,
      0x5ac864, 0x5cc863, 0x5ec962, 0x60ca60, 0x63cb5f, 0x65cb5e, 0x67cc5c, 0x69cd5b, 0x6ccd5a, 0x6ece58,
      0x70cf57, 0x73d056, 0x75d054, 0x77d153, 0x7ad151, 0x7cd250, 0x7fd34e, 0x81d34d, 0x84d44b, 0x86d549,
      0x89d548, 0x8bd646, 0x8ed645, 0x90d743, 0x93d741, 0x95d840, 0x98d83e, 0x9bd93c, 0x9dd93b, 0xa0da39,
      0xa2da37, 0xa5db36, 0xa8db34, 0xaadc32, 0xaddc30, 0xb0dd2f, 0xb2dd2d, 0xb5de2b, 0xb8de29, 0xbade28,
      0xbddf26, 0xc0df25, 0xc2df23, 0xc5e021, 0xc8e020, 0xcae11f, 0xcde11d, 0xd0e11c, 0xd2e21b, 0xd5e21a,
      0xd8e219, 0xdae319, 0xdde318, 0xdfe318, 0xe2e418, 0xe5e419, 0xe7e419, 0xeae51a, 0xece51b, 0xefe51c,
      0xf1e51d, 0xf4e61e, 0xf6e620, 0xf8e621, 0xfbe723, 0xfde725};
  std::size_t k = 0;
  if (t > 0.0) k = t >= 1.0 ? 255 : std::min<std::size_t>(255, static_cast<std::size_t>(t * 256));
  const std::uint32_t v = kViridis[k];
  return {static_cast<std::uint8_t>(v >> 16), static_cast<std::uint8_t>((v >> 8) & 0xFF),
          static_cast<std::uint8_t>(v & 0xFF)};
}

// ---------------------------------------------------------------------------------------------
// Ticks.
// ---------------------------------------------------------------------------------------------

LinearTicks nice_ticks(double lo, double hi, int max_ticks, bool extend) {
  const double mag = std::max(std::fabs(lo), std::fabs(hi));
  if (!std::isfinite(lo) || !std::isfinite(hi) || !(lo < hi) || !std::isfinite(hi - lo) ||
      !(hi - lo > 1e-12 * mag) || !(hi - lo >= 1e-250)) {
    throw ConfigError("tick range", format_number(lo) + " to " + format_number(hi),
                      "finite ends with low < high, at least 1e-12 of their magnitude apart");
  }
  if (max_ticks < 2) throw ConfigError("max_ticks", std::to_string(max_ticks), "2 or more");
  static constexpr std::array<int, 3> kMantissa = {1, 2, 5};
  // Start one decade below the step that would give max_ticks, so the first candidates are
  // too fine and the search ends at the smallest acceptable step.
  int e = static_cast<int>(std::floor(std::log10((hi - lo) / max_ticks))) - 1;
  for (;; ++e) {
    for (int m : kMantissa) {
      const double step = detail::decimal_value(m, e);
      const double a = lo / step, b = hi / step;
      const double k_lo = extend ? std::floor(a + 1e-9) : std::ceil(a - 1e-9);
      const double k_hi = extend ? std::ceil(b - 1e-9) : std::floor(b + 1e-9);
      const double count = k_hi - k_lo + 1;
      if (count > max_ticks || count < 1) continue;
      LinearTicks t;
      t.step = step;
      const auto lo_k = static_cast<long long>(k_lo), hi_k = static_cast<long long>(k_hi);
      for (long long k = lo_k; k <= hi_k; ++k) t.values.push_back(detail::decimal_value(k * m, e));
      t.lo = extend ? t.values.front() : lo;
      t.hi = extend ? t.values.back() : hi;
      double max_abs = 0.0;
      for (double v : t.values) max_abs = std::max(max_abs, std::fabs(v));
      const bool sci = e <= -5 || max_abs >= 1e6;
      for (std::size_t i = 0; i < t.values.size(); ++i) {
        const bool zero = lo_k + static_cast<long long>(i) == 0;
        if (zero) {
          t.labels.push_back(sci ? "0" : detail::fixed_label(0.0, std::max(0, -e)));
        } else {
          t.labels.push_back(sci ? detail::sci_label(t.values[i], e)
                                 : detail::fixed_label(t.values[i], std::max(0, -e)));
        }
      }
      return t;
    }
  }
}

std::vector<double> decade_ticks(double lo, double hi) {
  if (!std::isfinite(lo) || !std::isfinite(hi) || !(lo > 0.0) || !(lo < hi)) {
    throw ConfigError("decade range", format_number(lo) + " to " + format_number(hi),
                      "finite ends with 0 < low < high");
  }
  std::vector<double> out;
  const int k_lo = static_cast<int>(std::ceil(std::log10(lo) - 1e-9));
  const int k_hi = static_cast<int>(std::floor(std::log10(hi) + 1e-9));
  for (int k = k_lo; k <= k_hi; ++k) out.push_back(detail::pow10_exact(k));
  return out;
}

}  // namespace plot

// ---------------------------------------------------------------------------------------------
// The renderer.
// ---------------------------------------------------------------------------------------------
namespace detail {
namespace {

struct Pt {
  double x = 0.0, y = 0.0;
};

struct Box {
  double x0 = 0.0, y0 = 0.0, x1 = 0.0, y1 = 0.0;  // x0 <= x1, y0 <= y1 (pixels)
  bool contains(Pt p, double tol = 0.0) const {
    return p.x >= x0 - tol && p.x <= x1 + tol && p.y >= y0 - tol && p.y <= y1 + tol;
  }
  bool overlaps(const Box& o) const { return x0 < o.x1 && o.x0 < x1 && y0 < o.y1 && o.y0 < y1; }
  Box inflated(double d) const { return {x0 - d, y0 - d, x1 + d, y1 + d}; }
};

// Liang-Barsky: cuts the segment a-b to the box. Endpoints inside stay bit-identical, so
// pieces of a polyline join exactly.
bool clip_segment(Pt& a, Pt& b, const Box& r) {
  const double dx = b.x - a.x, dy = b.y - a.y;
  double t0 = 0.0, t1 = 1.0;
  const std::array<double, 4> p = {-dx, dx, -dy, dy};
  const std::array<double, 4> q = {a.x - r.x0, r.x1 - a.x, a.y - r.y0, r.y1 - a.y};
  for (int i = 0; i < 4; ++i) {
    if (p[i] == 0.0) {
      if (q[i] < 0.0) return false;
      continue;
    }
    const double t = q[i] / p[i];
    if (p[i] < 0.0) {
      if (t > t1) return false;
      t0 = std::max(t0, t);
    } else {
      if (t < t0) return false;
      t1 = std::min(t1, t);
    }
  }
  const Pt a0 = a;
  if (t1 < 1.0) b = {a0.x + t1 * dx, a0.y + t1 * dy};
  if (t0 > 0.0) a = {a0.x + t0 * dx, a0.y + t0 * dy};
  return true;
}

using Polyline = std::vector<Pt>;

void clip_polyline(const Polyline& in, const Box& r, std::vector<Polyline>& out) {
  Polyline cur;
  const auto flush = [&] {
    if (cur.size() >= 2) out.push_back(std::move(cur));
    cur.clear();
  };
  for (std::size_t i = 1; i < in.size(); ++i) {
    Pt a = in[i - 1], b = in[i];
    if (!clip_segment(a, b, r)) {
      flush();
      continue;
    }
    if (cur.empty() || cur.back().x != a.x || cur.back().y != a.y) {
      flush();
      cur.push_back(a);
    }
    cur.push_back(b);
  }
  flush();
}

// Sutherland-Hodgman against the four sides of the box.
Polyline clip_polygon(Polyline poly, const Box& r) {
  const auto pass = [&](auto inside, auto cross) {
    Polyline out;
    for (std::size_t i = 0; i < poly.size(); ++i) {
      const Pt& p = poly[i];
      const Pt& q = poly[(i + 1) % poly.size()];
      const bool pin = inside(p), qin = inside(q);
      if (pin) out.push_back(p);
      if (pin != qin) out.push_back(cross(p, q));
    }
    poly = std::move(out);
  };
  const auto at_x = [](double x) {
    return [x](Pt p, Pt q) { return Pt{x, p.y + (q.y - p.y) * (x - p.x) / (q.x - p.x)}; };
  };
  const auto at_y = [](double y) {
    return [y](Pt p, Pt q) { return Pt{p.x + (q.x - p.x) * (y - p.y) / (q.y - p.y), y}; };
  };
  pass([&](Pt p) { return p.x >= r.x0; }, at_x(r.x0));
  if (!poly.empty()) pass([&](Pt p) { return p.x <= r.x1; }, at_x(r.x1));
  if (!poly.empty()) pass([&](Pt p) { return p.y >= r.y0; }, at_y(r.y0));
  if (!poly.empty()) pass([&](Pt p) { return p.y <= r.y1; }, at_y(r.y1));
  return poly;
}

// Ramer-Douglas-Peucker with a tolerance far below a pixel: long traces (spectra with many
// bins) lose the points that cannot change the drawing.
Polyline simplify(const Polyline& in, double eps) {
  if (in.size() <= 2) return in;
  std::vector<char> keep(in.size(), 0);
  keep.front() = keep.back() = 1;
  std::vector<std::pair<std::size_t, std::size_t>> stack = {{0, in.size() - 1}};
  while (!stack.empty()) {
    const auto [i, j] = stack.back();
    stack.pop_back();
    const double dx = in[j].x - in[i].x, dy = in[j].y - in[i].y;
    const double len = std::hypot(dx, dy);
    double worst = -1.0;
    std::size_t at = i;
    for (std::size_t k = i + 1; k < j; ++k) {
      const double d = len > 0.0 ? std::fabs(dx * (in[k].y - in[i].y) - dy * (in[k].x - in[i].x)) / len
                                 : std::hypot(in[k].x - in[i].x, in[k].y - in[i].y);
      if (d > worst) {
        worst = d;
        at = k;
      }
    }
    if (worst > eps) {
      keep[at] = 1;
      stack.push_back({i, at});
      stack.push_back({at, j});
    }
  }
  Polyline out;
  for (std::size_t k = 0; k < in.size(); ++k)
    if (keep[k]) out.push_back(in[k]);
  return out;
}

bool point_in_polygon(Pt p, const Polyline& poly) {
  bool in = false;
  for (std::size_t i = 0, j = poly.size() - 1; i < poly.size(); j = i++) {
    if ((poly[i].y > p.y) != (poly[j].y > p.y) &&
        p.x < (poly[j].x - poly[i].x) * (p.y - poly[i].y) / (poly[j].y - poly[i].y) + poly[i].x)
      in = !in;
  }
  return in;
}

// ---------------------------------------------------------------------------------------------
// Axis planning.
// ---------------------------------------------------------------------------------------------

// Values a figure can place: finite, at most 1e300 in magnitude (so that differences stay
// finite), and on a log axis at least 1e-300 (so that powers of ten stay normal doubles).
constexpr double kMaxMagnitude = 1e300;
constexpr double kMinLog = 1e-300;
bool drawable(double v, bool log) {
  return std::isfinite(v) && std::fabs(v) <= kMaxMagnitude && (!log || v >= kMinLog);
}

// Data coordinate -> pixel along one axis.
struct AxisMap {
  bool log = false;
  double lo = 0.0, hi = 1.0;      // limits in data units
  double p_lo = 0.0, p_hi = 1.0;  // pixels of lo and hi
  double t(double v) const { return log ? std::log10(v) : v; }
  bool ok(double v) const { return drawable(v, log); }
  double px(double v) const { return p_lo + (t(v) - t(lo)) / (t(hi) - t(lo)) * (p_hi - p_lo); }
};

struct AxisPlan {
  Scale scale = Scale::linear;
  double lo = 0.0, hi = 1.0;
  std::vector<double> major;        // labelled ticks
  std::vector<std::string> labels;  // rich text
  std::vector<double> unlabelled;   // log decades between labelled ones
  std::vector<double> minor;
  double max_label_width = 0.0;
  bool scripts = false;  // labels with raised exponents (taller)
};

struct Extent {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void add(double v) {
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool empty() const { return !(lo <= hi); }
};

void finish_labels(AxisPlan& p, double size) {
  p.max_label_width = 0.0;
  p.scripts = false;
  for (const auto& l : p.labels) {
    p.max_label_width = std::max(p.max_label_width, text_width(l, size));
    p.scripts = p.scripts || has_script(l);
  }
}

std::string decade_label(int k, plot::LogLabels style) {
  if (style == plot::LogLabels::superscript) {
    return "10^{" + (k < 0 ? kMinus + std::to_string(-k) : std::to_string(k)) + "}";
  }
  if (k >= -2 && k <= 3) return fixed_label(pow10_exact(k), std::max(0, -k));
  return "1e" + std::to_string(k);
}

// Plans one axis of `length` px. `tight` keeps automatic limits at the data (heat maps,
// colour bars); otherwise they round outwards to ticks or decades. `min_gap` returns the
// spacing (px) a tick needs beside its neighbour for a label width (x axes), or a constant.
template <class Gap>
AxisPlan plan_axis(const Axis& a, Extent data, double length, bool tight, int tick_target, Gap min_gap) {
  AxisPlan p;
  p.scale = a.scale;
  const bool has_min = std::isfinite(a.min), has_max = std::isfinite(a.max);
  if (a.scale == Scale::linear) {
    if (data.empty()) data = {0.0, 1.0};
    double lo = has_min ? a.min : data.lo;
    double hi = has_max ? a.max : data.hi;
    // A single value, an explicit limit beyond all data, or a range too narrow to tick:
    // widen the automatic side(s). (Explicit pairs are checked when the axis is set.)
    const double mag = std::max(std::fabs(lo), std::fabs(hi));
    if (!(hi - lo > 1e-12 * mag) || !(hi - lo >= 1e-250)) {
      const double d = mag > 1e-250 ? 0.05 * mag : 1.0;
      if (has_min && !has_max) {
        hi = lo + d;
      } else if (has_max && !has_min) {
        lo = hi - d;
      } else {
        const double c = 0.5 * (lo + hi);
        lo = c - d;
        hi = c + d;
      }
    }
    // Fewer ticks until the labels have room.
    for (int n = std::max(2, tick_target); n >= 2; --n) {
      const bool fixed = has_min && has_max;
      plot::LinearTicks t = plot::nice_ticks(lo, hi, n, !fixed && !tight);
      p.lo = (has_min || tight) ? lo : t.lo;
      p.hi = (has_max || tight) ? hi : t.hi;
      p.major.clear();
      p.labels.clear();
      const double tol = 1e-9 * (p.hi - p.lo);
      for (std::size_t i = 0; i < t.values.size(); ++i) {
        if (t.values[i] < p.lo - tol || t.values[i] > p.hi + tol) continue;
        p.major.push_back(t.values[i]);
        p.labels.push_back(t.labels[i]);
      }
      finish_labels(p, kTickSize);
      const double spacing = length * t.step / (p.hi - p.lo);
      if (spacing >= min_gap(p.max_label_width) || n == 2) break;
    }
    return p;
  }

  // log10
  Extent d = data;
  if (has_min) d.add(a.min);
  if (has_max) d.add(a.max);
  if (d.empty() || !(d.lo >= kMinLog)) d = {1.0, 10.0};
  double lo =
      has_min ? a.min : (tight ? d.lo : pow10_exact(static_cast<int>(std::floor(std::log10(d.lo) + 1e-9))));
  double hi =
      has_max ? a.max : (tight ? d.hi : pow10_exact(static_cast<int>(std::ceil(std::log10(d.hi) - 1e-9))));
  if (!(lo < hi)) {
    if (has_max && !has_min) {
      lo = hi / 10.0;
    } else {
      hi = lo * 10.0;
    }
  }
  p.lo = lo;
  p.hi = hi;
  const double decades = std::log10(hi) - std::log10(lo);
  const double px_per_decade = length / decades;
  const std::vector<double> dec = plot::decade_ticks(lo, hi);
  const auto decade_exp = [](double v) { return static_cast<int>(std::lround(std::log10(v))); };
  if (dec.size() >= 2) {
    // Label every s-th decade, s the smallest stride whose labels do not crowd.
    double widest = 0.0;
    for (double v : dec)
      widest = std::max(widest, text_width(decade_label(decade_exp(v), a.log_labels), kTickSize));
    static constexpr std::array<int, 9> kStride = {1, 2, 3, 4, 5, 10, 20, 50, 100};
    int stride = kStride.back();
    for (int s : kStride) {
      if (s * px_per_decade >= min_gap(widest)) {
        stride = s;
        break;
      }
    }
    for (double v : dec) {
      const int k = decade_exp(v);
      if (k % stride == 0) {
        p.major.push_back(v);
        p.labels.push_back(decade_label(k, a.log_labels));
      } else {
        p.unlabelled.push_back(v);
      }
    }
    if (px_per_decade >= 30.0) {
      const int k0 = static_cast<int>(std::floor(std::log10(lo))) - 1;
      const int k1 = static_cast<int>(std::ceil(std::log10(hi)));
      for (int k = k0; k <= k1; ++k) {
        for (int m = 2; m <= 9; ++m) {
          const double v = decimal_value(m, k);
          if (v >= lo * (1 - 1e-12) && v <= hi * (1 + 1e-12)) p.minor.push_back(v);
        }
      }
    }
  } else {
    // Less than one decade boundary inside: label mantissas 1..9 (or 1, 2, 5 when crowded).
    const int k0 = static_cast<int>(std::floor(std::log10(lo))) - 1;
    const int k1 = static_cast<int>(std::ceil(std::log10(hi)));
    std::vector<std::pair<double, int>> cand;
    for (int k = k0; k <= k1; ++k)
      for (int m = 1; m <= 9; ++m) {
        const double v = decimal_value(m, k);
        if (v >= lo * (1 - 1e-12) && v <= hi * (1 + 1e-12)) cand.push_back({v, m});
      }
    double widest = 0.0;
    for (const auto& c : cand) widest = std::max(widest, text_width(short_label(c.first), kTickSize));
    // The tightest spacing is between 9 and 10 (log10(10/9) of a decade).
    const bool all = px_per_decade * std::log10(10.0 / 9.0) >= min_gap(widest);
    const bool some = px_per_decade * std::log10(5.0 / 2.0) * 0.5 >= min_gap(widest);
    for (const auto& [v, m] : cand) {
      if (all || (some && (m == 1 || m == 2 || m == 5)) || m == 1) {
        p.major.push_back(v);
        p.labels.push_back(short_label(v));
      } else {
        p.minor.push_back(v);
      }
    }
    if (p.major.size() < 2) {  // a very short range: fall back to its ends
      p.major = {lo, hi};
      p.labels = {short_label(lo), short_label(hi)};
    }
  }
  finish_labels(p, kTickSize);
  return p;
}

// ---------------------------------------------------------------------------------------------
// Legend entries and dash patterns.
// ---------------------------------------------------------------------------------------------

enum class Swatch { line, marker, band, area, bar };

struct LegendEntry {
  std::string label;
  Swatch swatch = Swatch::line;
  Color color;
  Style style;
  Marker marker = Marker::none;
  bool error_bar = false;
};

void append_stroke_style(std::string& out, Dash dash, double w) {
  switch (dash) {
    case Dash::solid:
      out += " stroke-linecap=\"round\"";
      break;
    case Dash::dashed:
      out += " stroke-dasharray=\"" + num(3.4 * w) + " " + num(2.2 * w) + "\"";
      break;
    case Dash::dotted:
      out += " stroke-linecap=\"round\" stroke-dasharray=\"0.01 " + num(2.3 * w) + "\"";
      break;
    case Dash::dash_dot:
      out += " stroke-linecap=\"round\" stroke-dasharray=\"" + num(2.6 * w) + " " + num(2.2 * w) + " 0.01 " +
             num(2.2 * w) + "\"";
      break;
  }
}

void append_opacity(std::string& out, const char* attr, double v) {
  if (v < 1.0) out += std::string(" ") + attr + "=\"" + num(v) + "\"";
}

void append_marker(std::string& out, Marker m, Pt p, double size) {
  const double r = 0.5 * size;
  switch (m) {
    case Marker::circle:
      put(out, "<circle cx=\"", p.x, "\" cy=\"", p.y, "\" r=\"", r, "\"/>");
      break;
    case Marker::square: {
      const double s = 0.89 * r;  // equal area to the circle
      put(out, "<rect x=\"", p.x - s, "\" y=\"", p.y - s, "\" width=\"", 2 * s, "\" height=\"", 2 * s,
          "\"/>");
      break;
    }
    case Marker::triangle: {
      const double s = 1.2 * r;
      put(out, "<path d=\"M", p.x, " ", p.y - s, "L", p.x + 0.866 * s, " ", p.y + 0.5 * s, "L",
          p.x - 0.866 * s, " ", p.y + 0.5 * s, "Z\"/>");
      break;
    }
    case Marker::diamond: {
      const double s = 1.2 * r;
      put(out, "<path d=\"M", p.x, " ", p.y - s, "L", p.x + 0.8 * s, " ", p.y, "L", p.x, " ", p.y + s, "L",
          p.x - 0.8 * s, " ", p.y, "Z\"/>");
      break;
    }
    case Marker::cross: {
      const double s = 0.8 * r;
      put(out, "<path d=\"M", p.x - s, " ", p.y - s, "L", p.x + s, " ", p.y + s, "M", p.x - s, " ", p.y + s,
          "L", p.x + s, " ", p.y - s, "\"/>");
      break;
    }
    case Marker::automatic:
    case Marker::none:
      break;
  }
}

// Group attributes for markers: filled shapes with a thin white rim (so overlapping markers
// stay apart), the cross as a stroke.
std::string marker_group(Marker m, const Color& c, double opacity) {
  std::string g;
  if (m == Marker::cross) {
    g = "<g fill=\"none\" stroke=\"" + c.hex() + "\" stroke-width=\"1.8\" stroke-linecap=\"round\"";
  } else {
    g = "<g fill=\"" + c.hex() + "\" stroke=\"#ffffff\" stroke-width=\"0.8\"";
  }
  append_opacity(g, "opacity", opacity);
  return g + ">";
}

std::string anchor_name(Anchor a) {
  switch (a) {
    case Anchor::start:
      return "start";
    case Anchor::middle:
      return "middle";
    case Anchor::end:
      return "end";
  }
  return "start";
}

// Writes a <text> element with runs for the ^{} and _{} markup.
void append_text(std::string& out, double x, double y, const std::string& text, double size, Anchor anchor,
                 const std::string& extra = {}) {
  out += "<text x=\"" + num(x) + "\" y=\"" + num(y) + "\"";
  if (size != kTickSize) out += " font-size=\"" + num(size) + "\"";
  if (anchor != Anchor::start) out += " text-anchor=\"" + anchor_name(anchor) + "\"";
  const std::vector<Run> runs = parse_runs(text);
  // Runs keep the spaces at their ends (default XML space handling would drop them).
  if (runs.size() > 1) out += " xml:space=\"preserve\"";
  out += extra + ">";
  // Baseline shifts use dy, which every SVG renderer honours.
  double shift = 0.0;
  for (const Run& r : runs) {
    const double target = r.level > 0 ? -kSupRaise * size : (r.level < 0 ? kSubLower * size : 0.0);
    if (r.level == 0 && target == shift) {
      append_escaped(out, r.text);
      continue;
    }
    out += "<tspan";
    if (target != shift) out += " dy=\"" + num(target - shift) + "\"";
    if (r.level != 0) out += " font-size=\"" + num(kSupScale * size) + "\"";
    out += ">";
    append_escaped(out, r.text);
    out += "</tspan>";
    shift = target;
  }
  out += "</text>";
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// PlotRenderer: plans the geometry of a Figure and writes it.
// ---------------------------------------------------------------------------------------------
class PlotRenderer {
 public:
  using F = plot::Figure;

  explicit PlotRenderer(const F& f) : c_(f.c_) {}

  plot::Layout layout() const {
    const Plan p = plan();
    plot::Layout l;
    l.plot_left = p.box.x0;
    l.plot_top = p.box.y0;
    l.plot_width = p.box.x1 - p.box.x0;
    l.plot_height = p.box.y1 - p.box.y0;
    l.x_min = p.mx.lo;
    l.x_max = p.mx.hi;
    l.y_min = p.my.lo;
    l.y_max = p.my.hi;
    l.x_ticks = p.xa.major;
    l.y_ticks = p.ya.major;
    l.legend = p.legend;
    return l;
  }

  std::string svg() const;

 private:
  struct ErrGeom {
    double x = 0.0, top = 0.0, bottom = 0.0;
    bool cap_top = true, cap_bottom = true, arrow_top = false, arrow_bottom = false;
  };
  struct SeriesGeom {
    std::vector<Polyline> lines;
    std::vector<Polyline> fills;
    std::vector<Pt> marks;
    std::vector<ErrGeom> errs;
  };
  struct BarGeom {
    Box box;
    Color color;
    double value = 0.0;
    Pt label_at;
    Anchor label_anchor = Anchor::start;
    bool label_inside = false;
    Box label_box;
  };
  struct Plan {
    Box box;  // plot area
    AxisPlan xa, ya;
    AxisMap mx, my;
    // bar chart
    bool bars = false;
    bool horizontal = true;
    std::size_t ncat = 0;
    bool rotate_categories = false;
    // colour bar
    bool cbar = false;
    AxisPlan ca;
    AxisMap mc;
    Box cbar_box;
    double vmin = 0.0, vmax = 1.0;
    // legend
    std::vector<LegendEntry> entries;
    LegendPlace legend = LegendPlace::hidden;
    Box legend_box;
    double legend_row = 0.0;
    // pixel geometry of the layers
    std::vector<SeriesGeom> geo;
    std::vector<BarGeom> bar_geo;
  };

  std::vector<LegendEntry> legend_entries() const;
  Plan plan() const;
  Plan plan_with(const std::vector<LegendEntry>& entries, bool outside) const;
  void place_legend(Plan& p, LegendPlace where) const;
  Box legend_rect(const Plan& p, LegendPlace where) const;
  double legend_conflicts(const Plan& p, const Box& r) const;
  double data_conflicts(const Plan& p, const Box& r) const;
  std::vector<SeriesGeom> series_geometry(const Plan& p) const;
  std::vector<BarGeom> bar_geometry(const Plan& p) const;
  Box clip_box(const Plan& p) const { return p.box.inflated(4.0); }
  bool heat_colour(double v, const Plan& p, double& t) const;
  std::vector<Box> text_boxes(const Plan& p) const;
  // Placed text: baseline point, anchor and the box it covers.
  struct Placed {
    Pt at;
    Anchor anchor = Anchor::start;
    Box box;
  };
  std::optional<Placed> place_note(const Plan& p, const F::Text& t) const;
  std::optional<Placed> place_ref_label(const Plan& p, const F::Ref& r) const;

  void draw_grid(std::string& out, const Plan& p) const;
  void draw_heatmap(std::string& out, const Plan& p) const;
  void draw_series(std::string& out, const Plan& p) const;
  void draw_bars(std::string& out, const Plan& p) const;
  void draw_refs(std::string& out, const Plan& p) const;
  void draw_axes(std::string& out, const Plan& p) const;
  void draw_colorbar(std::string& out, const Plan& p, const std::string& prefix) const;
  void draw_legend(std::string& out, const Plan& p, const std::string& prefix) const;
  void draw_texts(std::string& out, const Plan& p) const;

  const F::Content& c_;
};

std::vector<LegendEntry> PlotRenderer::legend_entries() const {
  std::vector<LegendEntry> out;
  if (c_.bars) {
    if (c_.bars->groups.size() < 2) return out;
    for (std::size_t g = 0; g < c_.bars->groups.size(); ++g) {
      const auto& grp = c_.bars->groups[g];
      if (grp.label.empty()) continue;
      LegendEntry e;
      e.label = grp.label;
      e.swatch = Swatch::bar;
      e.color = grp.color.value_or(plot::palette_color(g));
      out.push_back(e);
    }
    return out;
  }
  for (const auto& s : c_.series) {
    if (s.style.label.empty()) continue;
    LegendEntry e;
    e.label = s.style.label;
    e.color = s.color;
    e.style = s.style;
    e.marker = s.marker;
    switch (s.kind) {
      case F::Kind::line:
      case F::Kind::step:
        e.swatch = Swatch::line;
        break;
      case F::Kind::points:
        e.swatch = Swatch::marker;
        e.error_bar = !s.errors.high.empty();
        break;
      case F::Kind::band:
        e.swatch = Swatch::band;
        break;
      case F::Kind::area:
        e.swatch = Swatch::area;
        break;
    }
    out.push_back(e);
  }
  return out;
}

PlotRenderer::Plan PlotRenderer::plan() const {
  const std::vector<LegendEntry> entries = legend_entries();
  LegendPlace where = c_.legend;
  if (entries.empty()) where = LegendPlace::hidden;
  if (where == LegendPlace::outside_right) return plan_with(entries, true);
  Plan p = plan_with(entries, false);
  if (where != LegendPlace::automatic) {
    place_legend(p, where);
    return p;
  }
  static constexpr std::array<LegendPlace, 4> kCorners = {
      LegendPlace::top_right, LegendPlace::top_left, LegendPlace::bottom_left, LegendPlace::bottom_right};
  double best = std::numeric_limits<double>::infinity();
  LegendPlace best_at = LegendPlace::top_right;
  for (LegendPlace corner : kCorners) {
    const Box r = legend_rect(p, corner);
    // A legend taller or wider than the plot area cannot sit inside it.
    if (r.x0 < p.box.x0 || r.y0 < p.box.y0 || r.x1 > p.box.x1 || r.y1 > p.box.y1) continue;
    const double score = legend_conflicts(p, r);
    if (score < best) {
      best = score;
      best_at = corner;
    }
  }
  // Covering a reference line (score 0.3) is tolerated; covering data is not.
  if (best >= 1.0) {
    Plan q = plan_with(entries, true);
    if (q.box.x1 - q.box.x0 >= 0.5 * c_.width) return q;
  }
  place_legend(p, best_at);
  return p;
}

void PlotRenderer::place_legend(Plan& p, LegendPlace where) const {
  p.legend = where;
  if (where != LegendPlace::hidden) p.legend_box = legend_rect(p, where);
}

Box PlotRenderer::legend_rect(const Plan& p, LegendPlace where) const {
  double text_w = 0.0;
  for (const auto& e : p.entries) text_w = std::max(text_w, text_width(e.label, kLegendSize));
  const double w = 8.0 + 30.0 + 8.0 + text_w + 10.0;
  const double h = p.entries.size() * p.legend_row + 10.0;
  const double inset = 8.0;
  const Box& b = p.box;
  switch (where) {
    case LegendPlace::top_left:
      return {b.x0 + inset, b.y0 + inset, b.x0 + inset + w, b.y0 + inset + h};
    case LegendPlace::bottom_left:
      return {b.x0 + inset, b.y1 - inset - h, b.x0 + inset + w, b.y1 - inset};
    case LegendPlace::bottom_right:
      return {b.x1 - inset - w, b.y1 - inset - h, b.x1 - inset, b.y1 - inset};
    case LegendPlace::outside_right: {
      double x0 = b.x1 + 14.0;
      if (p.cbar) {
        x0 = p.cbar_box.x1 + kTickLen + 5.0 + p.ca.max_label_width + 14.0 +
             (c_.heatmap->colorbar_label.empty() ? 0.0 : 10.0 + kLabelSize * 1.2);
      }
      return {x0, b.y0, x0 + w, b.y0 + h};
    }
    default:
      return {b.x1 - inset - w, b.y0 + inset, b.x1 - inset, b.y0 + inset + h};
  }
}

// How much data a legend at r would hide: drawn points and segments, bars, heat-map cells
// and text boxes that it overlaps.
// How much of the drawn series and bars a box would hide (segments, markers, bars, labels).
double PlotRenderer::data_conflicts(const Plan& p, const Box& r) const {
  double score = 0.0;
  const Box rr = r.inflated(3.0);
  for (const SeriesGeom& g : p.geo) {
    for (const Pt& m : g.marks) score += rr.contains(m, 4.0) ? 1.0 : 0.0;
    for (const Polyline& l : g.lines) {
      for (std::size_t i = 1; i < l.size(); ++i) {
        Pt a = l[i - 1], b = l[i];
        if (clip_segment(a, b, rr)) score += 1.0;
      }
    }
    for (const Polyline& f : g.fills) {
      if (f.size() >= 3 && point_in_polygon({0.5 * (r.x0 + r.x1), 0.5 * (r.y0 + r.y1)}, f)) score += 5.0;
    }
    for (const ErrGeom& e : g.errs) {
      Pt a{e.x, e.top}, b{e.x, e.bottom};
      if (clip_segment(a, b, rr)) score += 1.0;
    }
  }
  for (const BarGeom& b : p.bar_geo) {
    if (b.box.overlaps(rr)) score += 1.0;
    if (c_.bars->value_labels && b.label_box.overlaps(rr)) score += 1.0;
  }
  return score;
}

double PlotRenderer::legend_conflicts(const Plan& p, const Box& r) const {
  double score = data_conflicts(p, r);
  const Box rr = r.inflated(3.0);
  for (const Box& t : text_boxes(p)) score += t.overlaps(rr) ? 1.0 : 0.0;
  for (const auto& ref : c_.refs) {
    const AxisMap& m = ref.horizontal ? p.my : p.mx;
    if (!m.ok(ref.value)) continue;
    const double v = m.px(ref.value);
    if (ref.horizontal ? (v >= rr.y0 && v <= rr.y1) : (v >= rr.x0 && v <= rr.x1)) score += 0.3;
  }
  if (c_.heatmap) {
    const plot::HeatMap& h = *c_.heatmap;
    const double dx = (h.x_max - h.x_min) / h.columns, dy = (h.y_max - h.y_min) / h.rows;
    for (std::size_t row = 0; row < h.rows; ++row) {
      for (std::size_t col = 0; col < h.columns; ++col) {
        double t = 0.0;
        if (!heat_colour(h.values[row * h.columns + col], p, t)) continue;
        const double xa = h.x_min + col * dx, ya = h.y_min + row * dy;
        if (!p.mx.ok(xa) || !p.my.ok(ya)) continue;
        const double x0 = p.mx.px(xa), x1 = p.mx.px(xa + dx);
        const double y0 = p.my.px(ya + dy), y1 = p.my.px(ya);
        if (Box{std::min(x0, x1), std::min(y0, y1), std::max(x0, x1), std::max(y0, y1)}.overlaps(rr))
          score += 0.2;
      }
    }
  }
  return score;
}

PlotRenderer::Plan PlotRenderer::plan_with(const std::vector<LegendEntry>& entries, bool outside) const {
  Plan p;
  p.entries = entries;
  p.legend_row = std::max(18.0, 1.5 * kLegendSize);
  const double W = c_.width, H = c_.height;
  const bool bars = c_.bars.has_value();
  p.bars = bars;
  p.horizontal = bars ? c_.bars->horizontal : true;
  p.ncat = bars ? c_.bars->categories.size() : 0;

  // Value and category axes of a bar chart; x and y of an x-y figure.
  const Axis& ax = c_.x;
  const Axis& ay = c_.y;
  Extent ex, ey;
  if (bars) {
    Extent v;
    const bool value_log = (p.horizontal ? ax : ay).scale == Scale::log10;
    if (!value_log) v.add(0.0);
    for (const auto& g : c_.bars->groups)
      for (double x : g.values)
        if (drawable(x, value_log)) v.add(x);
    for (const auto& r : c_.refs)
      if (drawable(r.value, value_log)) v.add(r.value);
    (p.horizontal ? ex : ey) = v;
  } else {
    const bool xlog = ax.scale == Scale::log10, ylog = ay.scale == Scale::log10;
    const auto ok = [](double v, bool log) { return drawable(v, log); };
    for (const auto& s : c_.series) {
      const std::size_t n = s.x.size();
      for (std::size_t i = 0; i < n; ++i) {
        if (!ok(s.x[i], xlog)) continue;
        const bool yi = ok(s.y[i], ylog);
        const bool y2i = s.kind == F::Kind::band && ok(s.y2[i], ylog);
        if (yi || y2i) ex.add(s.x[i]);
        if (yi) ey.add(s.y[i]);
        if (y2i) ey.add(s.y2[i]);
        if (!s.errors.high.empty()) {
          // Error-bar ends count too, except a zero low end on a log axis (drawn to the bottom).
          if (ok(s.errors.high[i], ylog)) {
            ex.add(s.x[i]);
            ey.add(s.errors.high[i]);
          }
          if (ok(s.errors.low[i], ylog)) ey.add(s.errors.low[i]);
        }
      }
    }
    for (const auto& r : c_.refs) {
      if (r.horizontal && ok(r.value, ylog)) ey.add(r.value);
      if (!r.horizontal && ok(r.value, xlog)) ex.add(r.value);
    }
  }
  const bool tight = c_.heatmap.has_value();
  if (tight) {
    const auto edge = [](Extent& e, double v, const Axis& a) {
      if (drawable(v, a.scale == Scale::log10)) e.add(v);
    };
    edge(ex, c_.heatmap->x_min, ax);
    edge(ex, c_.heatmap->x_max, ax);
    edge(ey, c_.heatmap->y_min, ay);
    edge(ey, c_.heatmap->y_max, ay);
  }

  // Vertical layout first: top and bottom margins depend only on font sizes.
  const Axis& cat_axis = p.horizontal ? ay : ax;  // in a bar chart
  const std::string& x_label = ax.label;
  const std::string& y_label = ay.label;
  double top = kPad + (c_.title.empty() ? 6.0 : kTitleSize * 1.25 + 8.0);
  double bottom = kPad + kTickLen + 5.0 + kTickSize * 1.05 + (x_label.empty() ? 0.0 : 8.0 + kLabelSize * 1.2);
  if (bars && !p.horizontal) {
    double cat_w = 0.0;
    for (const auto& cname : c_.bars->categories) cat_w = std::max(cat_w, text_width(cname, kTickSize));
    const double band_w = (W - 120.0) / std::max<std::size_t>(1, p.ncat);
    if (cat_w > band_w - 8.0) {
      p.rotate_categories = true;
      bottom += cat_w * std::sin(0.61) + 4.0;  // 35 degrees
    }
  }
  if (ax.scale == Scale::log10 && ax.log_labels == plot::LogLabels::superscript) bottom += 3.0;
  top = std::round(top);
  bottom = std::round(bottom);
  const double plot_h = H - top - bottom;

  const auto y_gap = [](double) { return 24.0; };
  const auto x_gap = [](double label_w) { return label_w + 14.0; };
  const int y_target = std::clamp(static_cast<int>(plot_h / 50.0) + 1, 3, 11);

  // y axis (or the category axis of horizontal bars).
  double left_labels = 0.0;
  if (!bars || !p.horizontal) {
    p.ya = plan_axis(ay, ey, plot_h, tight, y_target, y_gap);
    left_labels = p.ya.max_label_width;
  } else {
    for (const auto& cname : c_.bars->categories)
      left_labels = std::max(left_labels, text_width(cname, kTickSize));
  }
  const std::string& left_title = (bars && p.horizontal) ? cat_axis.label : y_label;
  double left = kPad + (left_title.empty() ? 0.0 : kLabelSize * 1.2 + 8.0) + left_labels + 8.0 +
                (bars && p.horizontal ? 0.0 : kTickLen);
  left = std::round(std::max(left, 40.0));

  // Colour bar at the right.
  double right = kPad + 8.0;
  if (c_.heatmap) {
    p.cbar = true;
    const plot::HeatMap& h = *c_.heatmap;
    Extent v;
    const bool clog = h.color_scale == Scale::log10;
    for (double x : h.values)
      if (drawable(x, clog)) v.add(x);
    const bool fmin = std::isfinite(h.value_min), fmax = std::isfinite(h.value_max);
    double vmin = fmin ? h.value_min : (v.empty() ? (clog ? 1.0 : 0.0) : v.lo);
    double vmax = fmax ? h.value_max : (v.empty() ? (clog ? 10.0 : 1.0) : v.hi);
    // A constant map, or one explicit limit beyond all values: widen the automatic side.
    // (Explicit pairs are checked when the heat map is set.)
    if (clog) {
      if (!(std::log10(vmax) - std::log10(vmin) > 1e-9)) {
        if (fmax && !fmin) {
          vmin = vmax / 10.0;
        } else {
          vmax = vmin * 10.0;
        }
      }
    } else {
      const double mag = std::max(std::fabs(vmin), std::fabs(vmax));
      if (!(vmax - vmin > 1e-12 * mag) || !(vmax - vmin >= 1e-250)) {
        const double d = mag > 1e-250 ? 0.05 * mag : 1.0;
        if (fmax && !fmin) {
          vmin = vmax - d;
        } else if (fmin && !fmax) {
          vmax = vmin + d;
        } else {
          const double c = 0.5 * (vmin + vmax);
          vmin = c - d;
          vmax = c + d;
        }
      }
    }
    p.vmin = vmin;
    p.vmax = vmax;
    Axis ca;
    ca.scale = h.color_scale;
    ca.min = vmin;
    ca.max = vmax;
    ca.log_labels = plot::LogLabels::superscript;
    p.ca = plan_axis(ca, {vmin, vmax}, plot_h, true, y_target, y_gap);
    right = 16.0 + 16.0 + kTickLen + 5.0 + p.ca.max_label_width +
            (h.colorbar_label.empty() ? 0.0 : 10.0 + kLabelSize * 1.2) + kPad;
  }
  if (outside) {
    double text_w = 0.0;
    for (const auto& e : entries) text_w = std::max(text_w, text_width(e.label, kLegendSize));
    right += 14.0 + 8.0 + 30.0 + 8.0 + text_w + 10.0 - (c_.heatmap ? 0.0 : 8.0);
  }

  // x axis (or the category axis of vertical bars); the last tick label may hang over the
  // right end of the frame, so the margin grows to hold half of it.
  const auto plan_x = [&](double r) {
    const double plot_w = W - left - std::round(r);
    const int x_target = std::clamp(static_cast<int>(plot_w / 52.0) + 1, 3, 14);
    return plan_axis(ax, ex, plot_w, tight, x_target, x_gap);
  };
  if (!bars || p.horizontal) {
    p.xa = plan_x(right);
    if (!p.xa.labels.empty() && !p.cbar && !outside) {
      const double half = 0.5 * text_width(p.xa.labels.back(), kTickSize);
      if (half + 4.0 > right) {
        right = half + 4.0;
        p.xa = plan_x(right);
      }
    }
  }
  right = std::round(right);
  if (p.rotate_categories) {
    // The first slanted category label reaches left of its bar by its width * cos(35 deg).
    const double first = text_width(c_.bars->categories.front(), kTickSize);
    const double band = (W - left - right) / static_cast<double>(p.ncat);
    left = std::max(left, std::round(kPad + first * std::cos(0.61) - 0.5 * band - 4.0));
  }
  p.box = {left, top, W - right, H - bottom};
  if (p.box.x1 - p.box.x0 < 20.0) p.box.x1 = p.box.x0 + 20.0;
  if (p.box.y1 - p.box.y0 < 20.0) p.box.y1 = p.box.y0 + 20.0;

  // Pixel maps.
  if (bars) {
    const double n = static_cast<double>(std::max<std::size_t>(1, p.ncat));
    AxisMap cat;
    cat.lo = -0.5;
    cat.hi = n - 0.5;
    if (p.horizontal) {
      p.mx = {p.xa.scale == Scale::log10, p.xa.lo, p.xa.hi, p.box.x0, p.box.x1};
      cat.p_lo = p.box.y0;  // category 0 at the top
      cat.p_hi = p.box.y1;
      p.my = cat;
      p.ya = {};
    } else {
      p.my = {p.ya.scale == Scale::log10, p.ya.lo, p.ya.hi, p.box.y1, p.box.y0};
      cat.p_lo = p.box.x0;
      cat.p_hi = p.box.x1;
      p.mx = cat;
      p.xa = {};
    }
  } else {
    p.mx = {p.xa.scale == Scale::log10, p.xa.lo, p.xa.hi, p.box.x0, p.box.x1};
    p.my = {p.ya.scale == Scale::log10, p.ya.lo, p.ya.hi, p.box.y1, p.box.y0};
  }
  if (p.cbar) {
    p.cbar_box = {p.box.x1 + 16.0, p.box.y0, p.box.x1 + 32.0, p.box.y1};
    p.mc = {p.ca.scale == Scale::log10, p.ca.lo, p.ca.hi, p.box.y1, p.box.y0};
  }
  p.geo = series_geometry(p);
  p.bar_geo = bar_geometry(p);
  if (outside && !entries.empty()) place_legend(p, LegendPlace::outside_right);
  return p;
}

bool PlotRenderer::heat_colour(double v, const Plan& p, double& t) const {
  const bool clog = c_.heatmap->color_scale == Scale::log10;
  if (!std::isfinite(v) || (clog && v <= 0.0)) return false;
  t = clog ? (std::log10(v) - std::log10(p.vmin)) / (std::log10(p.vmax) - std::log10(p.vmin))
           : (v - p.vmin) / (p.vmax - p.vmin);
  t = std::clamp(t, 0.0, 1.0);
  return true;
}

std::vector<PlotRenderer::SeriesGeom> PlotRenderer::series_geometry(const Plan& p) const {
  std::vector<SeriesGeom> out;
  const Box clip = clip_box(p);
  const AxisMap& mx = p.mx;
  const AxisMap& my = p.my;
  const auto pixel_pieces = [&](const std::vector<double>& xs, const std::vector<double>& ys) {
    std::vector<Polyline> pieces(1);
    for (std::size_t i = 0; i < xs.size(); ++i) {
      if (mx.ok(xs[i]) && my.ok(ys[i])) {
        pieces.back().push_back({mx.px(xs[i]), my.px(ys[i])});
      } else if (!pieces.back().empty()) {
        pieces.emplace_back();
      }
    }
    return pieces;
  };
  const auto stroke = [&](const std::vector<Polyline>& pieces, SeriesGeom& g) {
    std::vector<Polyline> clipped;
    for (const Polyline& pc : pieces) clip_polyline(pc, clip, clipped);
    for (Polyline& pc : clipped) g.lines.push_back(simplify(pc, 0.08));
  };
  for (const auto& s : c_.series) {
    SeriesGeom g;
    switch (s.kind) {
      case F::Kind::line:
      case F::Kind::points:
        if (s.kind == F::Kind::line) stroke(pixel_pieces(s.x, s.y), g);
        break;
      case F::Kind::step: {
        std::vector<double> xs, ys;
        const std::size_t n = s.x.size();
        for (std::size_t i = 0; i < n; ++i) {
          xs.push_back(s.x[i]);
          ys.push_back(s.y[i]);
          if (i + 1 < n) {
            const bool post = s.step_at == plot::StepAt::post;
            xs.push_back(post ? s.x[i + 1] : s.x[i]);
            ys.push_back(post ? s.y[i] : s.y[i + 1]);
          }
        }
        stroke(pixel_pieces(xs, ys), g);
        break;
      }
      case F::Kind::band:
      case F::Kind::area: {
        const bool band = s.kind == F::Kind::band;
        const double bottom_px = p.box.y1 + 4.0;
        Polyline upper, lower;
        const auto close_piece = [&] {
          if (upper.size() >= 2) {
            Polyline poly = upper;
            for (auto it = lower.rbegin(); it != lower.rend(); ++it) poly.push_back(*it);
            poly = clip_polygon(std::move(poly), clip);
            if (poly.size() >= 3) g.fills.push_back(std::move(poly));
          }
          upper.clear();
          lower.clear();
        };
        std::vector<double> lo_x, lo_y;
        for (std::size_t i = 0; i < s.x.size(); ++i) {
          const double top_v = band ? s.y2[i] : s.y[i];
          const double low_v = band ? s.y[i] : std::numeric_limits<double>::quiet_NaN();
          if (!mx.ok(s.x[i]) || !my.ok(top_v) || (band && !std::isfinite(low_v))) {
            close_piece();
            continue;
          }
          const double px = mx.px(s.x[i]);
          upper.push_back({px, my.px(top_v)});
          // A low end below a log axis' domain fills to the bottom of the plot.
          lower.push_back({px, band && my.ok(low_v) ? my.px(low_v) : bottom_px});
        }
        close_piece();
        if (band) {
          if (s.style.line_width > 0.0) {
            stroke(pixel_pieces(s.x, s.y), g);
            stroke(pixel_pieces(s.x, s.y2), g);
          }
        } else {
          stroke(pixel_pieces(s.x, s.y), g);
        }
        break;
      }
    }
    if (s.marker != Marker::none) {
      for (std::size_t i = 0; i < s.x.size(); ++i) {
        if (!mx.ok(s.x[i]) || !my.ok(s.y[i])) continue;
        const Pt m{mx.px(s.x[i]), my.px(s.y[i])};
        if (p.box.contains(m, 0.5)) g.marks.push_back(m);
      }
    }
    if (!s.errors.high.empty()) {
      for (std::size_t i = 0; i < s.x.size(); ++i) {
        const double lo = s.errors.low[i], hi = s.errors.high[i];
        if (!mx.ok(s.x[i]) || !my.ok(hi) || std::isnan(lo)) continue;
        const double x = mx.px(s.x[i]);
        if (x < p.box.x0 - 0.5 || x > p.box.x1 + 0.5) continue;
        ErrGeom e;
        e.x = x;
        e.top = my.px(hi);
        if (!my.ok(lo) || lo < my.lo) {
          e.bottom = p.box.y1;
          e.cap_bottom = false;
          e.arrow_bottom = true;
        } else {
          e.bottom = my.px(lo);
        }
        if (hi > my.hi) {
          e.top = p.box.y0;
          e.cap_top = false;
          e.arrow_top = true;
        }
        if (e.top > p.box.y1 || e.bottom < p.box.y0 || e.bottom < e.top) continue;
        g.errs.push_back(e);
      }
    }
    out.push_back(std::move(g));
  }
  return out;
}

std::vector<PlotRenderer::BarGeom> PlotRenderer::bar_geometry(const Plan& p) const {
  std::vector<BarGeom> out;
  if (!c_.bars) return out;
  const plot::Bars& b = *c_.bars;
  const std::size_t G = b.groups.size();
  if (G == 0 || p.ncat == 0) return out;
  const AxisMap& val = p.horizontal ? p.mx : p.my;
  const AxisMap& cat = p.horizontal ? p.my : p.mx;
  const double band = std::fabs(cat.px(1.0) - cat.px(0.0));
  const double thick = std::min(0.74 * band, 34.0 * G);
  const double each = thick / G;
  const double base_v = val.log ? val.lo : std::clamp(0.0, val.lo, val.hi);
  const double base = val.px(base_v);
  for (std::size_t g = 0; g < G; ++g) {
    const Color color = b.groups[g].color.value_or(plot::palette_color(g));
    for (std::size_t k = 0; k < p.ncat; ++k) {
      const double v = b.groups[g].values[k];
      if (!val.ok(v)) continue;
      const double centre = cat.px(static_cast<double>(k));
      const double c0 = centre - 0.5 * thick + g * each;
      double end = val.px(std::clamp(v, val.lo, val.hi));
      BarGeom bg;
      bg.color = color;
      bg.value = v;
      const double lw = text_width(value_label(v, b.value_decimals) + b.value_suffix, kValueSize);
      if (p.horizontal) {
        bg.box = {std::min(base, end), c0 + 0.5, std::max(base, end), c0 + each - 0.5};
        const bool neg = end < base;
        const double mid = 0.5 * (bg.box.y0 + bg.box.y1) + 0.36 * kValueSize;
        if (!neg) {
          bg.label_inside = end + 5.0 + lw > p.box.x1 && (end - base) > lw + 10.0;
          bg.label_at = {bg.label_inside ? end - 5.0 : end + 5.0, mid};
          bg.label_anchor = bg.label_inside ? Anchor::end : Anchor::start;
        } else {
          bg.label_inside = end - 5.0 - lw < p.box.x0 && (base - end) > lw + 10.0;
          bg.label_at = {bg.label_inside ? end + 5.0 : end - 5.0, mid};
          bg.label_anchor = bg.label_inside ? Anchor::start : Anchor::end;
        }
      } else {
        bg.box = {c0 + 0.5, std::min(base, end), c0 + each - 0.5, std::max(base, end)};
        const bool neg = end > base;
        const double mid = 0.5 * (bg.box.x0 + bg.box.x1);
        bg.label_anchor = Anchor::middle;
        if (!neg) {
          bg.label_inside = end - 6.0 - kValueSize < p.box.y0 && (base - end) > kValueSize + 8.0;
          bg.label_at = {mid, bg.label_inside ? end + 4.0 + kValueSize * 0.9 : end - 5.0};
        } else {
          bg.label_inside = end + 6.0 + kValueSize > p.box.y1 && (end - base) > kValueSize + 8.0;
          bg.label_at = {mid, bg.label_inside ? end - 5.0 : end + 4.0 + kValueSize * 0.9};
        }
      }
      const double lx0 =
          bg.label_anchor == Anchor::start
              ? bg.label_at.x
              : (bg.label_anchor == Anchor::middle ? bg.label_at.x - 0.5 * lw : bg.label_at.x - lw);
      bg.label_box = {lx0, bg.label_at.y - 0.8 * kValueSize, lx0 + lw, bg.label_at.y + 0.25 * kValueSize};
      out.push_back(bg);
    }
  }
  return out;
}

// Boxes taken by reference-line labels and notes (for the legend's placement).
std::vector<Box> PlotRenderer::text_boxes(const Plan& p) const {
  std::vector<Box> out;
  for (const auto& t : c_.texts)
    if (auto pl = place_note(p, t)) out.push_back(pl->box);
  for (const auto& r : c_.refs)
    if (auto pl = place_ref_label(p, r)) out.push_back(pl->box);
  return out;
}

namespace {
Box text_box(Pt at, Anchor anchor, double w, double size) {
  const double x0 = anchor == Anchor::start ? at.x : (anchor == Anchor::middle ? at.x - 0.5 * w : at.x - w);
  return {x0, at.y - 0.8 * size, x0 + w, at.y + 0.25 * size};
}
}  // namespace

// A note sits at its data point plus offset. If it would cross the top or bottom of the frame
// it goes to the other side of its point (mirrored offset), and if it would cross a side it
// slides inside; notes whose point is outside the plot area are not drawn.
std::optional<PlotRenderer::Placed> PlotRenderer::place_note(const Plan& p, const F::Text& t) const {
  if (!p.mx.ok(t.x) || !p.my.ok(t.y)) return std::nullopt;
  const Pt data{p.mx.px(t.x), p.my.px(t.y)};
  if (!p.box.contains(data, 0.5)) return std::nullopt;
  Placed pl;
  pl.anchor = t.note.anchor;
  pl.at = {data.x + t.note.dx, data.y + t.note.dy};
  const double size = t.note.font_size;
  const double w = text_width(t.text, size);
  Box bx = text_box(pl.at, pl.anchor, w, size);
  const Box& b = p.box;
  if (bx.y0 < b.y0 + 3.0 || bx.y1 > b.y1 - 3.0) {
    // Mirror about the point: the box's centre moves to the other side by the same amount.
    const double shift = 2.0 * (data.y - 0.5 * (bx.y0 + bx.y1));
    const Box flipped{bx.x0, bx.y0 + shift, bx.x1, bx.y1 + shift};
    if (flipped.y0 >= b.y0 + 3.0 && flipped.y1 <= b.y1 - 3.0) {
      pl.at.y += shift;
      bx = flipped;
    }
  }
  double sx = 0.0, sy = 0.0;
  if (bx.x1 > b.x1 - 3.0) sx = b.x1 - 3.0 - bx.x1;
  if (bx.x0 + sx < b.x0 + 3.0) sx = b.x0 + 3.0 - bx.x0;
  if (bx.y0 < b.y0 + 3.0) sy = b.y0 + 3.0 - bx.y0;
  if (bx.y1 + sy > b.y1 - 3.0) sy = b.y1 - 3.0 - bx.y1;
  pl.at = {pl.at.x + sx, pl.at.y + sy};
  pl.box = {bx.x0 + sx, bx.y0 + sy, bx.x1 + sx, bx.y1 + sy};
  return pl;
}

// A reference-line label goes above a horizontal line at its right end (below it near the
// top), and beside a vertical line at its top (to the left near the right edge).
std::optional<PlotRenderer::Placed> PlotRenderer::place_ref_label(const Plan& p, const F::Ref& r) const {
  if (r.line.label.empty()) return std::nullopt;
  const AxisMap& m = r.horizontal ? p.my : p.mx;
  if (!m.ok(r.value)) return std::nullopt;
  const Box& b = p.box;
  const double v = m.px(r.value);
  if (r.horizontal ? (v < b.y0 - 0.5 || v > b.y1 + 0.5) : (v < b.x0 - 0.5 || v > b.x1 + 0.5))
    return std::nullopt;
  const double size = kLegendSize;
  const double w = text_width(r.line.label, size);
  // Candidates in order of preference; the first that hides no data wins, else the one
  // that hides least.
  std::vector<Placed> cand;
  const auto add = [&](Pt at, Anchor anchor) {
    Placed pl{at, anchor, text_box(at, anchor, w, size)};
    if (pl.box.x0 >= b.x0 + 2.0 && pl.box.x1 <= b.x1 - 2.0 && pl.box.y0 >= b.y0 + 2.0 &&
        pl.box.y1 <= b.y1 - 2.0)
      cand.push_back(pl);
  };
  // After the ends of the line, positions along it (middle first).
  static constexpr std::array<double, 7> kAlong = {0.5, 0.25, 0.75, 0.125, 0.375, 0.625, 0.875};
  if (r.horizontal) {
    const double above = v - 5.0, below = v + 0.8 * size + 5.0;
    add({b.x1 - 6.0, above}, Anchor::end);
    add({b.x0 + 6.0, above}, Anchor::start);
    add({b.x1 - 6.0, below}, Anchor::end);
    add({b.x0 + 6.0, below}, Anchor::start);
    for (double f : kAlong) {
      add({b.x0 + f * (b.x1 - b.x0), above}, Anchor::middle);
      add({b.x0 + f * (b.x1 - b.x0), below}, Anchor::middle);
    }
  } else {
    const double top = b.y0 + size + 4.0, bottom = b.y1 - 0.25 * size - 6.0;
    add({v + 5.0, top}, Anchor::start);
    add({v - 5.0, top}, Anchor::end);
    add({v + 5.0, bottom}, Anchor::start);
    add({v - 5.0, bottom}, Anchor::end);
    for (double f : kAlong) {
      const double y = b.y0 + f * (b.y1 - b.y0) + 0.3 * size;
      add({v + 5.0, y}, Anchor::start);
      add({v - 5.0, y}, Anchor::end);
    }
  }
  if (cand.empty()) {
    Placed pl;
    pl.anchor = r.horizontal ? Anchor::end : Anchor::start;
    pl.at = r.horizontal ? Pt{b.x1 - 6.0, v - 5.0} : Pt{v + 5.0, b.y0 + size + 4.0};
    pl.box = text_box(pl.at, pl.anchor, w, size);
    return pl;
  }
  std::size_t best = 0;
  double best_score = std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < cand.size(); ++i) {
    const double sc = data_conflicts(p, cand[i].box);
    if (sc < best_score) {
      best_score = sc;
      best = i;
    }
    if (sc == 0.0) break;
  }
  return cand[best];
}

// ---------------------------------------------------------------------------------------------
// Drawing.
// ---------------------------------------------------------------------------------------------

namespace {
// Crisp 1-px lines: a line of width 1 sits on a pixel centre; at the frame it goes onto the
// frame line itself.
double snap(double v, double lo, double hi) {
  if (std::fabs(v - lo) < 0.01) return lo - 0.5;
  if (std::fabs(v - hi) < 0.01) return hi + 0.5;
  return std::floor(v) + 0.5;
}

void append_path(std::string& out, const Polyline& l) {
  for (std::size_t i = 0; i < l.size(); ++i) {
    out += i == 0 ? "M" : "L";
    append_num(out, l[i].x);
    out += ' ';
    append_num(out, l[i].y);
  }
}
}  // namespace

void PlotRenderer::draw_grid(std::string& out, const Plan& p) const {
  const Box& b = p.box;
  out += "<rect x=\"" + num(b.x0) + "\" y=\"" + num(b.y0) + "\" width=\"" + num(b.x1 - b.x0) +
         "\" height=\"" + num(b.y1 - b.y0) + "\" fill=\"#ffffff\"/>";
  std::string minor, major;
  const auto vertical = [&](std::string& s, const AxisMap& m, double v) {
    const double x = m.px(v);
    if (x <= b.x0 + 0.5 || x >= b.x1 - 0.5) return;
    put(s, "M", snap(x, b.x0, b.x1), " ", b.y0, "V", b.y1);
  };
  const auto horizontal = [&](std::string& s, const AxisMap& m, double v) {
    const double y = m.px(v);
    if (y <= b.y0 + 0.5 || y >= b.y1 - 0.5) return;
    put(s, "M", b.x0, " ", snap(y, b.y0, b.y1), "H", b.x1);
  };
  const bool xgrid = c_.x.grid && !(p.bars && !p.horizontal);
  const bool ygrid = c_.y.grid && !(p.bars && p.horizontal);
  if (xgrid) {
    for (double v : p.xa.minor) vertical(minor, p.mx, v);
    for (double v : p.xa.major) vertical(major, p.mx, v);
    for (double v : p.xa.unlabelled) vertical(major, p.mx, v);
  }
  if (ygrid) {
    for (double v : p.ya.minor) horizontal(minor, p.my, v);
    for (double v : p.ya.major) horizontal(major, p.my, v);
    for (double v : p.ya.unlabelled) horizontal(major, p.my, v);
  }
  if (!minor.empty())
    out += "<path d=\"" + minor + "\" fill=\"none\" stroke=\"" + kMinorGrid + "\" stroke-width=\"1\"/>";
  if (!major.empty())
    out += "<path d=\"" + major + "\" fill=\"none\" stroke=\"" + kGrid + "\" stroke-width=\"1\"/>";
}

void PlotRenderer::draw_heatmap(std::string& out, const Plan& p) const {
  // The colour of each level is formatted once; cells with equal level merge along a row.
  std::array<std::string, 256> fill;
  for (int k = 0; k < 256; ++k) fill[k] = plot::viridis((k + 0.5) / 256.0).hex();
  const plot::HeatMap& h = *c_.heatmap;
  const double dx = (h.x_max - h.x_min) / h.columns, dy = (h.y_max - h.y_min) / h.rows;
  const Box& b = p.box;
  std::vector<int> level(h.columns);
  for (std::size_t row = 0; row < h.rows; ++row) {
    const double ya = h.y_min + row * dy, yb = h.y_min + (row + 1) * dy;
    if (!p.my.ok(ya) || !p.my.ok(yb)) continue;
    const double y0 = std::max(std::min(p.my.px(ya), p.my.px(yb)), b.y0);
    const double y1 = std::min(std::max(p.my.px(ya), p.my.px(yb)), b.y1);
    if (y1 <= y0) continue;
    for (std::size_t col = 0; col < h.columns; ++col) {
      double t = 0.0;
      level[col] = heat_colour(h.values[row * h.columns + col], p, t)
                       ? std::min(255, static_cast<int>(t * 256.0))
                       : -1;
    }
    for (std::size_t col = 0; col < h.columns;) {
      std::size_t end = col + 1;
      while (end < h.columns && level[end] == level[col]) ++end;
      const double xa = h.x_min + col * dx, xb = h.x_min + end * dx;
      if (level[col] >= 0 && p.mx.ok(xa) && p.mx.ok(xb)) {
        const double x0 = std::max(std::min(p.mx.px(xa), p.mx.px(xb)), b.x0);
        const double x1 = std::min(std::max(p.mx.px(xa), p.mx.px(xb)), b.x1);
        if (x1 > x0) {
          out += "<rect x=\"" + num(x0) + "\" y=\"" + num(y0) + "\" width=\"" + num(x1 - x0) +
                 "\" height=\"" + num(y1 - y0) + "\" fill=\"" + fill[level[col]] + "\"/>";
        }
      }
      col = end;
    }
  }
}

void PlotRenderer::draw_series(std::string& out, const Plan& p) const {
  const std::vector<SeriesGeom>& geo = p.geo;
  for (std::size_t k = 0; k < geo.size(); ++k) {
    const auto& s = c_.series[k];
    const SeriesGeom& g = geo[k];
    const std::string col = s.color.hex();
    for (const Polyline& f : g.fills) {
      out += "<path d=\"";
      append_path(out, f);
      out += "Z\" fill=\"" + col + "\" fill-opacity=\"" + num(s.style.fill_opacity) + "\" stroke=\"none\"/>";
    }
    if (!g.lines.empty() && s.style.line_width > 0.0) {
      const double w = s.kind == F::Kind::band ? 0.5 * s.style.line_width : s.style.line_width;
      out += "<path d=\"";
      for (const Polyline& l : g.lines) append_path(out, l);
      out +=
          "\" fill=\"none\" stroke=\"" + col + "\" stroke-width=\"" + num(w) + "\" stroke-linejoin=\"round\"";
      append_stroke_style(out, s.style.dash, w);
      append_opacity(out, "stroke-opacity", s.style.opacity);
      out += "/>";
    }
    if (!g.errs.empty()) {
      const double cap = std::max(3.0, 0.5 * s.style.marker_size);
      std::string d, heads;
      for (const ErrGeom& e : g.errs) {
        put(d, "M", e.x, " ", e.top, "V", e.bottom);
        if (e.cap_top) put(d, "M", e.x - cap, " ", e.top, "H", e.x + cap);
        if (e.cap_bottom) put(d, "M", e.x - cap, " ", e.bottom, "H", e.x + cap);
        if (e.arrow_bottom) {
          put(heads, "M", e.x, " ", e.bottom, "L", e.x - 3.5, " ", e.bottom - 7.0, "H", e.x + 3.5, "Z");
        }
        if (e.arrow_top) {
          put(heads, "M", e.x, " ", e.top, "L", e.x - 3.5, " ", e.top + 7.0, "H", e.x + 3.5, "Z");
        }
      }
      out += "<path d=\"" + d + "\" fill=\"none\" stroke=\"" + col + "\" stroke-width=\"1.3\"";
      append_opacity(out, "stroke-opacity", s.style.opacity);
      out += "/>";
      if (!heads.empty()) {
        out += "<path d=\"" + heads + "\" fill=\"" + col + "\" stroke=\"none\"";
        append_opacity(out, "fill-opacity", s.style.opacity);
        out += "/>";
      }
    }
    if (!g.marks.empty()) {
      out += marker_group(s.marker, s.color, s.style.opacity);
      for (const Pt& m : g.marks) append_marker(out, s.marker, m, s.style.marker_size);
      out += "</g>";
    }
  }
}

void PlotRenderer::draw_bars(std::string& out, const Plan& p) const {
  const plot::Bars& b = *c_.bars;
  const std::vector<BarGeom>& geo = p.bar_geo;
  for (const BarGeom& g : geo) {
    out += "<rect x=\"" + num(g.box.x0) + "\" y=\"" + num(g.box.y0) + "\" width=\"" +
           num(g.box.x1 - g.box.x0) + "\" height=\"" + num(g.box.y1 - g.box.y0) + "\" fill=\"" +
           g.color.hex() + "\"/>";
  }
  if (!b.value_labels) return;
  for (const BarGeom& g : geo) {
    const std::string text = value_label(g.value, b.value_decimals) + b.value_suffix;
    append_text(out, g.label_at.x, g.label_at.y, text, kValueSize, g.label_anchor,
                std::string(" fill=\"") + (g.label_inside ? "#ffffff" : kInk) + "\"");
  }
}

void PlotRenderer::draw_refs(std::string& out, const Plan& p) const {
  const Box& b = p.box;
  for (const auto& r : c_.refs) {
    const AxisMap& m = r.horizontal ? p.my : p.mx;
    if (!m.ok(r.value)) continue;
    const double v = m.px(r.value);
    if (r.horizontal ? (v < b.y0 - 0.5 || v > b.y1 + 0.5) : (v < b.x0 - 0.5 || v > b.x1 + 0.5)) continue;
    const std::string col = r.line.color ? r.line.color->hex() : std::string("#555555");
    out += "<path d=\"";
    if (r.horizontal) {
      put(out, "M", b.x0, " ", v, "H", b.x1);
    } else {
      put(out, "M", v, " ", b.y0, "V", b.y1);
    }
    out += "\" fill=\"none\" stroke=\"" + col + "\" stroke-width=\"" + num(r.line.line_width) + "\"";
    append_stroke_style(out, r.line.dash, r.line.line_width);
    out += "/>";
    const auto pl = place_ref_label(p, r);
    if (!pl) continue;
    // A translucent white plate keeps the label readable over grid and data.
    put(out, "<rect x=\"", pl->box.x0 - 2.0, "\" y=\"", pl->box.y0 - 1.0, "\" width=\"",
        pl->box.x1 - pl->box.x0 + 4.0, "\" height=\"", pl->box.y1 - pl->box.y0 + 2.0,
        "\" fill=\"#ffffff\" fill-opacity=\"0.8\"/>");
    append_text(out, pl->at.x, pl->at.y, r.line.label, kLegendSize, pl->anchor, " fill=\"" + col + "\"");
  }
}

void PlotRenderer::draw_axes(std::string& out, const Plan& p) const {
  const Box& b = p.box;
  out += "<rect x=\"" + num(b.x0 - 0.5) + "\" y=\"" + num(b.y0 - 0.5) + "\" width=\"" +
         num(b.x1 - b.x0 + 1.0) + "\" height=\"" + num(b.y1 - b.y0 + 1.0) + "\" fill=\"none\" stroke=\"" +
         kFrame + "\" stroke-width=\"1\"/>";
  std::string ticks;
  std::string labels;
  const auto x_axis = [&](const AxisPlan& a, const AxisMap& m) {
    const auto tick = [&](double v, double len) {
      const double x = m.px(v);
      if (x < b.x0 - 0.5 || x > b.x1 + 0.5) return;
      put(ticks, "M", snap(x, b.x0, b.x1), " ", b.y1 + 0.5, "v", len);
    };
    for (double v : a.minor) tick(v, kMinorLen);
    for (double v : a.unlabelled) tick(v, kTickLen);
    for (std::size_t i = 0; i < a.major.size(); ++i) {
      tick(a.major[i], kTickLen);
      const double y = b.y1 + kTickLen + 4.0 + 0.92 * kTickSize + (a.scripts ? 3.0 : 0.0);
      append_text(labels, m.px(a.major[i]), y, a.labels[i], kTickSize, Anchor::middle);
    }
  };
  const auto y_axis = [&](const AxisPlan& a, const AxisMap& m) {
    const auto tick = [&](double v, double len) {
      const double y = m.px(v);
      if (y < b.y0 - 0.5 || y > b.y1 + 0.5) return;
      put(ticks, "M", b.x0 - 0.5, " ", snap(y, b.y0, b.y1), "h", -len);
    };
    for (double v : a.minor) tick(v, kMinorLen);
    for (double v : a.unlabelled) tick(v, kTickLen);
    for (std::size_t i = 0; i < a.major.size(); ++i) {
      tick(a.major[i], kTickLen);
      const double y = m.px(a.major[i]) + 0.36 * kTickSize + (a.scripts ? 2.0 : 0.0);
      append_text(labels, b.x0 - kTickLen - 5.0, y, a.labels[i], kTickSize, Anchor::end);
    }
  };
  if (!p.bars || p.horizontal) x_axis(p.xa, p.mx);
  if (!p.bars || !p.horizontal) y_axis(p.ya, p.my);
  if (p.bars) {
    const auto& cats = c_.bars->categories;
    for (std::size_t k = 0; k < cats.size(); ++k) {
      if (p.horizontal) {
        const double y = p.my.px(static_cast<double>(k)) + 0.36 * kTickSize;
        append_text(labels, b.x0 - 8.0, y, cats[k], kTickSize, Anchor::end);
      } else {
        const double x = p.mx.px(static_cast<double>(k));
        put(ticks, "M", std::floor(x) + 0.5, " ", b.y1 + 0.5, "v", kTickLen);
        const double y = b.y1 + kTickLen + 4.0 + 0.92 * kTickSize;
        if (p.rotate_categories) {
          append_text(labels, x + 4.0, y - 4.0, cats[k], kTickSize, Anchor::end,
                      " transform=\"rotate(-35 " + num(x + 4.0) + " " + num(y - 4.0) + ")\"");
        } else {
          append_text(labels, x, y, cats[k], kTickSize, Anchor::middle);
        }
      }
    }
  }
  if (!ticks.empty())
    out += "<path d=\"" + ticks + "\" fill=\"none\" stroke=\"" + kFrame + "\" stroke-width=\"1\"/>";
  out += "<g fill=\"" + std::string(kInk) + "\">" + labels;
  // Axis titles.
  const double H = c_.height;
  if (!c_.x.label.empty()) {
    append_text(out, 0.5 * (b.x0 + b.x1), H - kPad - 0.28 * kLabelSize, c_.x.label, kLabelSize,
                Anchor::middle);
  }
  if (!c_.y.label.empty()) {
    const double x = kPad + 0.8 * kLabelSize, y = 0.5 * (b.y0 + b.y1);
    append_text(out, x, y, c_.y.label, kLabelSize, Anchor::middle,
                " transform=\"rotate(-90 " + num(x) + " " + num(y) + ")\"");
  }
  if (!c_.title.empty()) {
    // Centred over the plot area; over the picture if that is too narrow; smaller (down to
    // 11 px) if even the picture is too narrow.
    double size = kTitleSize;
    const double room = c_.width - 2.0 * kPad;
    const double w0 = text_width(c_.title, kTitleSize, true);
    if (w0 > room) size = std::max(11.0, kTitleSize * room / w0);
    const double w = text_width(c_.title, size, true);
    double x = 0.5 * (b.x0 + b.x1);
    if (x - 0.5 * w < kPad || x + 0.5 * w > c_.width - kPad) x = 0.5 * c_.width;
    append_text(out, x, kPad + 0.9 * kTitleSize, c_.title, size, Anchor::middle, " font-weight=\"bold\"");
  }
  out += "</g>";
}

void PlotRenderer::draw_colorbar(std::string& out, const Plan& p, const std::string& prefix) const {
  const Box& cb = p.cbar_box;
  out += "<g id=\"" + prefix + "-colorbar\">";
  out += "<g shape-rendering=\"crispEdges\">";
  constexpr int kStrips = 128;
  const double h = (cb.y1 - cb.y0) / kStrips;
  for (int k = 0; k < kStrips; ++k) {
    const double y0 = cb.y1 - (k + 1) * h;
    out += "<rect x=\"" + num(cb.x0) + "\" y=\"" + num(y0) + "\" width=\"" + num(cb.x1 - cb.x0) +
           "\" height=\"" + num(h) + "\" fill=\"" + plot::viridis((k + 0.5) / kStrips).hex() + "\"/>";
  }
  out += "</g>";
  out += "<rect x=\"" + num(cb.x0 - 0.5) + "\" y=\"" + num(cb.y0 - 0.5) + "\" width=\"" +
         num(cb.x1 - cb.x0 + 1.0) + "\" height=\"" + num(cb.y1 - cb.y0 + 1.0) + "\" fill=\"none\" stroke=\"" +
         kFrame + "\" stroke-width=\"1\"/>";
  std::string ticks, labels;
  const auto tick = [&](double v, double len) {
    const double y = p.mc.px(v);
    if (y < cb.y0 - 0.5 || y > cb.y1 + 0.5) return;
    put(ticks, "M", cb.x1 + 0.5, " ", snap(y, cb.y0, cb.y1), "h", len);
  };
  for (double v : p.ca.minor) tick(v, kMinorLen);
  for (double v : p.ca.unlabelled) tick(v, kTickLen);
  for (std::size_t i = 0; i < p.ca.major.size(); ++i) {
    tick(p.ca.major[i], kTickLen);
    const double y = p.mc.px(p.ca.major[i]) + 0.36 * kTickSize + (p.ca.scripts ? 2.0 : 0.0);
    append_text(labels, cb.x1 + kTickLen + 4.0, y, p.ca.labels[i], kTickSize, Anchor::start);
  }
  out += "<path d=\"" + ticks + "\" fill=\"none\" stroke=\"" + kFrame + "\" stroke-width=\"1\"/>";
  out += "<g fill=\"" + std::string(kInk) + "\">" + labels;
  const std::string& label = c_.heatmap->colorbar_label;
  if (!label.empty()) {
    const double x = cb.x1 + kTickLen + 4.0 + p.ca.max_label_width + 10.0 + 0.8 * kLabelSize;
    const double y = 0.5 * (cb.y0 + cb.y1);
    append_text(out, x, y, label, kLabelSize, Anchor::middle,
                " transform=\"rotate(-90 " + num(x) + " " + num(y) + ")\"");
  }
  out += "</g></g>";
}

void PlotRenderer::draw_legend(std::string& out, const Plan& p, const std::string& prefix) const {
  if (p.legend == LegendPlace::hidden || p.entries.empty()) return;
  const Box& r = p.legend_box;
  out += "<g id=\"" + prefix + "-legend\">";
  out += "<rect x=\"" + num(r.x0 + 0.5) + "\" y=\"" + num(r.y0 + 0.5) + "\" width=\"" + num(r.x1 - r.x0) +
         "\" height=\"" + num(r.y1 - r.y0) +
         "\" rx=\"3\" fill=\"#ffffff\" fill-opacity=\"0.92\" stroke=\"#c8c8c8\" stroke-width=\"1\"/>";
  std::string labels;
  for (std::size_t i = 0; i < p.entries.size(); ++i) {
    const LegendEntry& e = p.entries[i];
    const double cy = r.y0 + 5.0 + (i + 0.5) * p.legend_row;
    const double x0 = r.x0 + 8.0, x1 = x0 + 30.0, xm = 0.5 * (x0 + x1);
    const std::string col = e.color.hex();
    // A near-white swatch (markers meant for a dark heat map) gets a dark plate to show on.
    if (0.2126 * e.color.r + 0.7152 * e.color.g + 0.0722 * e.color.b > 0.8 * 255) {
      put(out, "<rect x=\"", x0 - 3.0, "\" y=\"", cy - 8.0,
          "\" width=\"36\" height=\"16\" fill=\"#555555\"/>");
    }
    switch (e.swatch) {
      case Swatch::line:
      case Swatch::area:
      case Swatch::band:
        if (e.swatch != Swatch::line) {
          out += "<rect x=\"" + num(x0) + "\" y=\"" + num(cy - 5.0) +
                 "\" width=\"30\" height=\"10\" fill=\"" + col + "\" fill-opacity=\"" +
                 num(std::max(e.style.fill_opacity, 0.15)) + "\"/>";
        }
        if (e.style.line_width > 0.0) {
          const double y = e.swatch == Swatch::line ? cy : cy - 5.0;
          const double w = e.swatch == Swatch::band ? 0.5 * e.style.line_width : e.style.line_width;
          out += "<path d=\"M" + num(x0) + " " + num(y) + "H" + num(x1) + "\" fill=\"none\" stroke=\"" + col +
                 "\" stroke-width=\"" + num(w) + "\"";
          append_stroke_style(out, e.style.dash, w);
          out += "/>";
        }
        if (e.marker != Marker::none) {
          out += marker_group(e.marker, e.color, 1.0);
          append_marker(out, e.marker, {xm, cy}, e.style.marker_size);
          out += "</g>";
        }
        break;
      case Swatch::marker:
        if (e.error_bar) {
          out += "<path d=\"M" + num(xm) + " " + num(cy - 7.0) + "V" + num(cy + 7.0) + "M" + num(xm - 3.0) +
                 " " + num(cy - 7.0) + "h6M" + num(xm - 3.0) + " " + num(cy + 7.0) +
                 "h6\" fill=\"none\" stroke=\"" + col + "\" stroke-width=\"1.3\"/>";
        }
        out += marker_group(e.marker, e.color, 1.0);
        append_marker(out, e.marker, {xm, cy}, e.style.marker_size);
        out += "</g>";
        break;
      case Swatch::bar:
        out += "<rect x=\"" + num(xm - 7.0) + "\" y=\"" + num(cy - 6.0) +
               "\" width=\"14\" height=\"12\" fill=\"" + col + "\"/>";
        break;
    }
    append_text(labels, x1 + 8.0, cy + 0.36 * kLegendSize, e.label, kLegendSize, Anchor::start);
  }
  out += "<g fill=\"" + std::string(kInk) + "\">" + labels + "</g></g>";
}

void PlotRenderer::draw_texts(std::string& out, const Plan& p) const {
  for (const auto& t : c_.texts) {
    const auto pl = place_note(p, t);
    if (!pl) continue;
    const std::string col = t.note.color ? t.note.color->hex() : std::string(kInk);
    append_text(out, pl->at.x, pl->at.y, t.text, t.note.font_size, pl->anchor, " fill=\"" + col + "\"");
  }
}

std::string PlotRenderer::svg() const {
  const Plan p = plan();
  // Ids are written with a placeholder (a control character, which no cleaned text can
  // contain); the default prefix is then a hash of the drawing, so it differs between figures.
  const std::string id = "\x01";
  const Box& b = p.box;
  std::string body;
  body.reserve(1 << 16);
  if (!c_.title.empty()) {
    body += "<title>";
    append_escaped(body, clean_text(c_.title));
    body += "</title>";
  }
  body += "<defs><clipPath id=\"" + id + "-plot-area\"><rect x=\"" + num(b.x0) + "\" y=\"" + num(b.y0) +
          "\" width=\"" + num(b.x1 - b.x0) + "\" height=\"" + num(b.y1 - b.y0) + "\"/></clipPath></defs>";
  body += "<rect width=\"" + std::to_string(c_.width) + "\" height=\"" + std::to_string(c_.height) +
          "\" fill=\"#ffffff\"/>";
  draw_grid(body, p);
  body += "<g clip-path=\"url(#" + id + "-plot-area)\">";
  if (c_.heatmap) {
    body += "<g id=\"" + id + "-heatmap\" shape-rendering=\"crispEdges\">";
    draw_heatmap(body, p);
    body += "</g>";
  }
  if (c_.bars) {
    draw_bars(body, p);
    // The zero line that bars grow from.
    const AxisMap& val = p.horizontal ? p.mx : p.my;
    if (!val.log && val.lo < 0.0 && val.hi > 0.0) {
      const double z = val.px(0.0);
      body += "<path d=\"";
      if (p.horizontal) {
        put(body, "M", z, " ", b.y0, "V", b.y1);
      } else {
        put(body, "M", b.x0, " ", z, "H", b.x1);
      }
      body += "\" fill=\"none\" stroke=\"" + std::string(kFrame) + "\" stroke-width=\"1\"/>";
    }
  }
  draw_series(body, p);
  draw_refs(body, p);
  body += "</g>";
  draw_axes(body, p);
  if (p.cbar) draw_colorbar(body, p, id);
  draw_texts(body, p);
  draw_legend(body, p, id);

  std::string prefix = c_.id_prefix;
  if (prefix.empty()) {
    std::uint64_t h = 1469598103934665603ULL;  // FNV-1a, 64 bit
    for (unsigned char ch : body) h = (h ^ ch) * 1099511628211ULL;
    char buf[24];
    std::snprintf(buf, sizeof buf, "qs%08x", static_cast<unsigned>(h ^ (h >> 32)));
    prefix = buf;
  }
  std::string out;
  out.reserve(body.size() + 512);
  out += "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" + std::to_string(c_.width) +
         "\" height=\"" + std::to_string(c_.height) + "\" viewBox=\"0 0 " + std::to_string(c_.width) + " " +
         std::to_string(c_.height) + "\" font-family=\"" + kFontFamily + "\" font-size=\"" + num(kTickSize) +
         "\">\n";
  for (char ch : body) {
    if (ch == '\x01') {
      out += prefix;
    } else {
      out += ch;
    }
  }
  out += "\n</svg>\n";
  return out;
}

}  // namespace detail

// ---------------------------------------------------------------------------------------------
// Figure: validation and storage.
// ---------------------------------------------------------------------------------------------
namespace plot {
namespace {

void check_axis(const char* name, const Axis& a) {
  const std::string n(name);
  if (!std::isnan(a.min) && !std::isfinite(a.min))
    throw ConfigError(n + ".min", format_number(a.min), "finite or kAuto");
  if (!std::isnan(a.max) && !std::isfinite(a.max))
    throw ConfigError(n + ".max", format_number(a.max), "finite or kAuto");
  if (a.scale == Scale::log10) {
    if (std::isfinite(a.min) && a.min <= 0.0)
      throw ConfigError(n + ".min", format_number(a.min), "> 0 on a log axis");
    if (std::isfinite(a.max) && a.max <= 0.0)
      throw ConfigError(n + ".max", format_number(a.max), "> 0 on a log axis");
  }
  for (double v : {a.min, a.max}) {
    const bool log = a.scale == Scale::log10;
    if (std::isfinite(v) && !(std::fabs(v) <= 1e300 && (!log || v >= 1e-300)))
      throw ConfigError(n + " limit", format_number(v), log ? "1e-300 to 1e300" : "-1e300 to 1e300");
  }
  if (std::isfinite(a.min) && std::isfinite(a.max)) {
    const double span = a.scale == Scale::log10 ? std::log10(a.max) - std::log10(a.min) : a.max - a.min;
    const double mag = a.scale == Scale::log10 ? 1.0 : std::max(std::fabs(a.min), std::fabs(a.max));
    if (!(span > 1e-12 * mag) || !(span >= 1e-250))
      throw ConfigError(n + ".min", format_number(a.min),
                        "below " + n + ".max = " + format_number(a.max) + " by 1e-12 of their size");
  }
}

void check_style(const Style& s) {
  require_range("Style.line_width", s.line_width, 0.0, 50.0);
  require_range("Style.marker_size", s.marker_size, 0.0, 100.0);
  require_range("Style.opacity", s.opacity, 0.0, 1.0);
  require_range("Style.fill_opacity", s.fill_opacity, 0.0, 1.0);
}

void check_lengths(const char* what, std::size_t n, std::size_t m) {
  if (n != m) {
    throw ConfigError(std::string(what) + " length", std::to_string(m),
                      "equal to the x length " + std::to_string(n));
  }
}

}  // namespace

Figure::Figure(std::string title) { c_.title = std::move(title); }

Figure& Figure::title(std::string title) {
  c_.title = std::move(title);
  return *this;
}

Figure& Figure::size(int width, int height) {
  require_range("Figure.width", width, 240, 4000);
  require_range("Figure.height", height, 240, 4000);
  c_.width = width;
  c_.height = height;
  return *this;
}

Figure& Figure::x_axis(Axis axis) {
  check_axis("x_axis", axis);
  c_.x = std::move(axis);
  return *this;
}

Figure& Figure::y_axis(Axis axis) {
  check_axis("y_axis", axis);
  c_.y = std::move(axis);
  return *this;
}

Figure& Figure::legend(LegendPlace place) {
  c_.legend = place;
  return *this;
}

Figure& Figure::id_prefix(std::string prefix) {
  const auto letter = [](char ch) { return (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z'); };
  bool ok = !prefix.empty() && letter(prefix[0]) && prefix.size() <= 64;
  for (char ch : prefix) ok = ok && (letter(ch) || (ch >= '0' && ch <= '9') || ch == '_' || ch == '-');
  if (!ok) {
    throw ConfigError("Figure.id_prefix", prefix,
                      "1 to 64 characters: a letter, then letters, digits, '_' or '-'");
  }
  c_.id_prefix = std::move(prefix);
  return *this;
}

Figure::Series& Figure::add_series(Kind kind, std::span<const double> x, std::span<const double> y,
                                   Style style) {
  if (c_.bars) throw ConfigError("Figure series", "x-y data", "none in a bar chart");
  check_style(style);
  check_lengths("y", x.size(), y.size());
  Series s;
  s.kind = kind;
  s.x.assign(x.begin(), x.end());
  s.y.assign(y.begin(), y.end());
  s.color = style.color.value_or(palette_color(c_.series.size()));
  s.marker = style.marker;
  if (s.marker == Marker::automatic) {
    static constexpr std::array<Marker, 5> kCycle = {Marker::circle, Marker::square, Marker::triangle,
                                                     Marker::diamond, Marker::cross};
    s.marker = kind == Kind::points ? kCycle[c_.points_series % kCycle.size()] : Marker::none;
  }
  if (kind == Kind::points) ++c_.points_series;
  s.style = std::move(style);
  c_.series.push_back(std::move(s));
  return c_.series.back();
}

Figure& Figure::line(std::span<const double> x, std::span<const double> y, Style style) {
  add_series(Kind::line, x, y, std::move(style));
  return *this;
}

Figure& Figure::points(std::span<const double> x, std::span<const double> y, Style style, ErrorBars errors) {
  if (errors.low.empty() != errors.high.empty()) {
    throw ConfigError("ErrorBars", "one of low/high empty", "both empty or both given");
  }
  if (!errors.high.empty()) {
    check_lengths("ErrorBars.low", x.size(), errors.low.size());
    check_lengths("ErrorBars.high", x.size(), errors.high.size());
  }
  Series& s = add_series(Kind::points, x, y, std::move(style));
  s.errors = std::move(errors);
  return *this;
}

Figure& Figure::step(std::span<const double> x, std::span<const double> y, Style style, StepAt at) {
  add_series(Kind::step, x, y, std::move(style)).step_at = at;
  return *this;
}

Figure& Figure::band(std::span<const double> x, std::span<const double> low, std::span<const double> high,
                     Style style) {
  check_lengths("band high", x.size(), high.size());
  Series& s = add_series(Kind::band, x, low, std::move(style));
  s.y2.assign(high.begin(), high.end());
  return *this;
}

Figure& Figure::area(std::span<const double> x, std::span<const double> y, Style style) {
  add_series(Kind::area, x, y, std::move(style));
  return *this;
}

Figure& Figure::hline(double y, RefLine line) {
  if (!std::isfinite(y)) throw ConfigError("hline value", format_number(y), "finite");
  require_range("RefLine.line_width", line.line_width, 0.0, 50.0);
  if (c_.bars && c_.bars->horizontal) {
    throw ConfigError("hline", format_number(y), "vline only (value axis) with horizontal bars");
  }
  c_.refs.push_back({true, y, std::move(line)});
  return *this;
}

Figure& Figure::vline(double x, RefLine line) {
  if (!std::isfinite(x)) throw ConfigError("vline value", format_number(x), "finite");
  require_range("RefLine.line_width", line.line_width, 0.0, 50.0);
  if (c_.bars && !c_.bars->horizontal) {
    throw ConfigError("vline", format_number(x), "hline only (value axis) with vertical bars");
  }
  c_.refs.push_back({false, x, std::move(line)});
  return *this;
}

Figure& Figure::text(double x, double y, std::string text, Note note) {
  require_range("Note.font_size", note.font_size, 4.0, 72.0);
  require_range("Note.dx", note.dx, -4000.0, 4000.0);
  require_range("Note.dy", note.dy, -4000.0, 4000.0);
  c_.texts.push_back({x, y, std::move(text), std::move(note)});
  return *this;
}

Figure& Figure::heatmap(HeatMap map) {
  if (c_.bars) throw ConfigError("Figure.heatmap", "a heat map", "none in a bar chart");
  if (map.rows == 0 || map.columns == 0 || map.values.size() != map.rows * map.columns) {
    throw ConfigError("HeatMap.values size", std::to_string(map.values.size()),
                      "rows * columns = " + std::to_string(map.rows) + " * " + std::to_string(map.columns) +
                          ", both at least 1");
  }
  const double big = 1e300;
  require_range("HeatMap.x_min", map.x_min, -big, big);
  require_range("HeatMap.x_max", map.x_max, -big, big);
  require_range("HeatMap.y_min", map.y_min, -big, big);
  require_range("HeatMap.y_max", map.y_max, -big, big);
  if (!(map.x_min < map.x_max)) throw ConfigError("HeatMap.x_max", format_number(map.x_max), "above x_min");
  if (!(map.y_min < map.y_max)) throw ConfigError("HeatMap.y_max", format_number(map.y_max), "above y_min");
  const bool clog = map.color_scale == Scale::log10;
  for (double v : {map.value_min, map.value_max}) {
    if (!std::isnan(v) && !(std::fabs(v) <= 1e300 && (!clog || v >= 1e-300)))
      throw ConfigError("HeatMap colour limit", format_number(v),
                        clog ? "1e-300 to 1e300 with log colours, or kAuto" : "-1e300 to 1e300 or kAuto");
  }
  if (std::isfinite(map.value_min) && std::isfinite(map.value_max)) {
    const double lo = map.value_min, hi = map.value_max;
    const double mag = std::max(std::fabs(lo), std::fabs(hi));
    const bool ok =
        clog ? std::log10(hi) - std::log10(lo) > 1e-12 : (hi - lo > 1e-12 * mag && hi - lo >= 1e-250);
    if (!ok) throw ConfigError("HeatMap.value_max", format_number(hi), "above value_min");
  }
  c_.heatmap = std::move(map);
  return *this;
}

Figure& Figure::bars(Bars chart) {
  if (!c_.series.empty() || c_.heatmap) {
    throw ConfigError("Figure.bars", "a bar chart", "a figure without x-y series or heat map");
  }
  for (const auto& g : chart.groups) {
    if (g.values.size() != chart.categories.size()) {
      throw ConfigError("BarGroup '" + g.label + "' values", std::to_string(g.values.size()),
                        "one per category (" + std::to_string(chart.categories.size()) + ")");
    }
  }
  require_range("Bars.value_decimals", chart.value_decimals, 0, 12);
  for (const auto& r : c_.refs) {
    if (r.horizontal == chart.horizontal) {
      throw ConfigError("Figure.bars", chart.horizontal ? "horizontal" : "vertical",
                        "an orientation whose value axis the reference lines cross");
    }
  }
  c_.bars = std::move(chart);
  return *this;
}

Layout Figure::layout() const { return detail::PlotRenderer(*this).layout(); }

std::string Figure::svg() const { return detail::PlotRenderer(*this).svg(); }

// ---------------------------------------------------------------------------------------------
// Atomic file output.
// ---------------------------------------------------------------------------------------------
void write_svg_file(const std::string& path, const std::string& svg) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  if (path.empty() || !target.has_filename()) throw InputError("SVG output '" + path + "': no file name");
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::random_device rd;
  const std::uint64_t r = (static_cast<std::uint64_t>(rd()) << 32) ^ rd();
  char tag[24];
  std::snprintf(tag, sizeof tag, "%016llx", static_cast<unsigned long long>(r));
  const fs::path tmp = dir / ("." + target.filename().string() + ".tmp-" + tag);
  std::error_code ec;
  {
    std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
    if (!out) {
      throw InputError("SVG output '" + path + "': cannot create a file in '" + dir.string() + "'");
    }
    out.write(svg.data(), static_cast<std::streamsize>(svg.size()));
    out.flush();
    out.close();
    if (out.fail()) {
      fs::remove(tmp, ec);
      throw InputError("SVG output '" + path + "': write failed");
    }
  }
  fs::rename(tmp, target, ec);
  if (ec) {
    std::error_code ignored;
    fs::remove(tmp, ignored);
    throw InputError("SVG output '" + path + "': cannot replace the file (" + ec.message() + ")");
  }
}

}  // namespace plot
}  // namespace qamsight
