// test_plot: SVG figures: well-formed output, ticks, pixel mapping, escaping, heat maps, writes.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <random>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "qamsight/plot.hpp"

namespace plot = qamsight::plot;
using qamsight::ConfigError;
using qamsight::InputError;

namespace {

// ---------------------------------------------------------------------------------------------
// A small XML 1.0 well-formedness checker (W3C XML 1.0, 5th ed.: sections 2.2 characters,
// 2.3 names, 2.5 comments, 3.1 tags, 4.1 references), ASCII names only. Returns "" when the
// document is well formed, else a description with the byte offset.
// ---------------------------------------------------------------------------------------------
class XmlChecker {
 public:
  explicit XmlChecker(std::string_view doc) : d_(doc) {}

  std::string check() {
    if (auto e = check_chars(); !e.empty()) return e;
    skip_misc();
    if (!at("<") || at("</")) return fail("no root element");
    if (auto e = element(); !e.empty()) return e;
    skip_misc();
    if (i_ != d_.size()) return fail("content after the root element");
    return {};
  }
  const std::string& root() const { return root_; }
  const std::vector<std::string>& ids() const { return ids_; }

 private:
  std::string fail(const std::string& what) const { return what + " at offset " + std::to_string(i_); }
  bool at(std::string_view s) const { return d_.substr(i_, s.size()) == s; }
  static bool name_start(char c) {
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || c == '_' || c == ':';
  }
  static bool name_char(char c) { return name_start(c) || (c >= '0' && c <= '9') || c == '-' || c == '.'; }
  static bool space(char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; }
  void skip_space() {
    while (i_ < d_.size() && space(d_[i_])) ++i_;
  }

  // Well-formed UTF-8 and only XML Char code points (no controls except tab, LF, CR).
  std::string check_chars() {
    for (std::size_t k = 0; k < d_.size();) {
      const auto b0 = static_cast<unsigned char>(d_[k]);
      std::size_t n = 0;
      char32_t cp = 0;
      if (b0 < 0x80) {
        n = 1;
        cp = b0;
      } else if (b0 >= 0xC2 && b0 <= 0xDF) {
        n = 2;
        cp = b0 & 0x1F;
      } else if (b0 >= 0xE0 && b0 <= 0xEF) {
        n = 3;
        cp = b0 & 0x0F;
      } else if (b0 >= 0xF0 && b0 <= 0xF4) {
        n = 4;
        cp = b0 & 0x07;
      } else {
        i_ = k;
        return fail("malformed UTF-8");
      }
      if (k + n > d_.size()) {
        i_ = k;
        return fail("truncated UTF-8");
      }
      for (std::size_t j = 1; j < n; ++j) {
        const auto b = static_cast<unsigned char>(d_[k + j]);
        if ((b & 0xC0) != 0x80) {
          i_ = k;
          return fail("malformed UTF-8");
        }
        cp = (cp << 6) | (b & 0x3F);
      }
      const bool ok = cp == 0x9 || cp == 0xA || cp == 0xD || (cp >= 0x20 && cp <= 0xD7FF) ||
                      (cp >= 0xE000 && cp <= 0xFFFD) || (cp >= 0x10000 && cp <= 0x10FFFF);
      if (!ok) {
        i_ = k;
        return fail("character not allowed in XML");
      }
      k += n;
    }
    return {};
  }

  void skip_misc() {
    for (;;) {
      skip_space();
      if (at("<!--")) {
        const std::size_t e = d_.find("-->", i_ + 4);
        if (e == std::string_view::npos) return;
        i_ = e + 3;
      } else if (at("<?")) {
        const std::size_t e = d_.find("?>", i_ + 2);
        if (e == std::string_view::npos) return;
        i_ = e + 2;
      } else {
        return;
      }
    }
  }

  std::string name(std::string& out) {
    if (i_ >= d_.size() || !name_start(d_[i_])) return fail("bad name");
    const std::size_t s = i_;
    while (i_ < d_.size() && name_char(d_[i_])) ++i_;
    out = std::string(d_.substr(s, i_ - s));
    return {};
  }

  // Text or attribute value: '<' is not allowed, '&' must start a valid reference.
  std::string references(std::string_view s, bool attribute) {
    for (std::size_t k = 0; k < s.size(); ++k) {
      if (s[k] == '<' && attribute) return fail("'<' in an attribute value");
      if (s[k] != '&') continue;
      const std::size_t e = s.find(';', k);
      if (e == std::string_view::npos) return fail("unterminated reference");
      const std::string_view ref = s.substr(k + 1, e - k - 1);
      static const std::set<std::string_view> kNamed = {"lt", "gt", "amp", "quot", "apos"};
      bool ok = kNamed.count(ref) > 0;
      if (!ok && ref.size() >= 2 && ref[0] == '#') {
        const bool hex = ref[1] == 'x';
        const std::string_view digits = ref.substr(hex ? 2 : 1);
        ok = !digits.empty() && std::all_of(digits.begin(), digits.end(), [&](char c) {
          return hex ? std::isxdigit(static_cast<unsigned char>(c)) != 0
                     : std::isdigit(static_cast<unsigned char>(c)) != 0;
        });
      }
      if (!ok) return fail("bad reference &" + std::string(ref) + ";");
      k = e;
    }
    return {};
  }

  std::string element() {
    std::vector<std::string> stack;
    for (;;) {
      if (at("<!--")) {
        const std::size_t e = d_.find("-->", i_ + 4);
        if (e == std::string_view::npos) return fail("unterminated comment");
        if (d_.substr(i_ + 4, e - i_ - 4).find("--") != std::string_view::npos)
          return fail("'--' in a comment");
        i_ = e + 3;
      } else if (at("<![CDATA[")) {
        const std::size_t e = d_.find("]]>", i_);
        if (e == std::string_view::npos) return fail("unterminated CDATA");
        i_ = e + 3;
      } else if (at("<?")) {
        const std::size_t e = d_.find("?>", i_);
        if (e == std::string_view::npos) return fail("unterminated processing instruction");
        i_ = e + 2;
      } else if (at("</")) {
        i_ += 2;
        std::string n;
        if (auto e = name(n); !e.empty()) return e;
        skip_space();
        if (!at(">")) return fail("bad end tag");
        ++i_;
        if (stack.empty() || stack.back() != n) return fail("end tag </" + n + "> does not match");
        stack.pop_back();
        if (stack.empty()) return {};
      } else if (at("<")) {
        ++i_;
        std::string n;
        if (auto e = name(n); !e.empty()) return e;
        if (root_.empty()) root_ = n;
        std::set<std::string> attrs;
        for (;;) {
          const bool had_space = i_ < d_.size() && space(d_[i_]);
          skip_space();
          if (at("/>")) {
            i_ += 2;
            if (stack.empty()) return {};
            break;
          }
          if (at(">")) {
            ++i_;
            stack.push_back(n);
            break;
          }
          if (!had_space) return fail("attributes must be separated by white space");
          std::string an;
          if (auto e = name(an); !e.empty()) return e;
          if (!attrs.insert(an).second) return fail("duplicate attribute " + an);
          skip_space();
          if (!at("=")) return fail("attribute without '='");
          ++i_;
          skip_space();
          if (i_ >= d_.size() || (d_[i_] != '"' && d_[i_] != '\'')) return fail("unquoted attribute");
          const char q = d_[i_++];
          const std::size_t e = d_.find(q, i_);
          if (e == std::string_view::npos) return fail("unterminated attribute value");
          const std::string_view v = d_.substr(i_, e - i_);
          if (auto err = references(v, true); !err.empty()) return err;
          if (an == "id") ids_.emplace_back(v);
          i_ = e + 1;
        }
      } else if (i_ >= d_.size()) {
        return fail("unexpected end of document inside <" + stack.back() + ">");
      } else {
        const std::size_t e = d_.find('<', i_);
        const std::string_view text = d_.substr(i_, (e == std::string_view::npos ? d_.size() : e) - i_);
        if (text.find("]]>") != std::string_view::npos) return fail("']]>' in text");
        if (auto err = references(text, false); !err.empty()) return err;
        i_ += text.size();
      }
    }
  }

  std::string_view d_;
  std::size_t i_ = 0;
  std::string root_;
  std::vector<std::string> ids_;
};

std::string xml_problem(const std::string& doc) { return XmlChecker(doc).check(); }

// The checker must reject what it is meant to catch (so a passing test means something).
TEST_CASE("the test's XML checker rejects malformed documents", "[plot]") {
  CHECK(xml_problem("<svg><g></g></svg>").empty());
  CHECK(xml_problem("<svg a=\"1\" b='2'>x &amp; y &#38; &#x26;<g/></svg>").empty());
  CHECK_FALSE(xml_problem("<svg><g></svg>").empty());          // unbalanced
  CHECK_FALSE(xml_problem("<svg><g></h></svg>").empty());      // mismatched
  CHECK_FALSE(xml_problem("<svg>a & b</svg>").empty());        // bare ampersand
  CHECK_FALSE(xml_problem("<svg>a < b</svg>").empty());        // bare '<'
  CHECK_FALSE(xml_problem("<svg a=\"<\"/>").empty());          // '<' in attribute
  CHECK_FALSE(xml_problem("<svg a=\"1\" a=\"2\"/>").empty());  // duplicate attribute
  CHECK_FALSE(xml_problem("<svg a=1/>").empty());              // unquoted
  CHECK_FALSE(xml_problem("<svg/><svg/>").empty());            // two roots
  CHECK_FALSE(xml_problem("<svg>\x01</svg>").empty());         // control character
  CHECK_FALSE(xml_problem("<svg>\xff</svg>").empty());         // malformed UTF-8
  CHECK_FALSE(xml_problem("<svg>&nbsp;</svg>").empty());       // undeclared entity
}

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::size_t count_of(const std::string& s, const std::string& what) {
  std::size_t n = 0;
  for (std::size_t p = s.find(what); p != std::string::npos; p = s.find(what, p + 1)) ++n;
  return n;
}

// The contents of the element <tag id="id" ...> ... </tag> (no nested element of the same tag).
std::string element_by_id(const std::string& svg, const std::string& tag, const std::string& id) {
  const std::size_t s = svg.find("<" + tag + " id=\"" + id + "\"");
  if (s == std::string::npos) return {};
  std::size_t depth = 0;
  for (std::size_t p = s; p < svg.size();) {
    const std::size_t open = svg.find("<" + tag, p + 1), close = svg.find("</" + tag + ">", p + 1);
    if (close == std::string::npos) return {};
    if (open != std::string::npos && open < close) {
      ++depth;
      p = open;
    } else {
      if (depth == 0) return svg.substr(s, close - s);
      --depth;
      p = close;
    }
  }
  return {};
}

std::vector<double> numbers_in(const std::string& s) {
  std::vector<double> v;
  static const std::regex kNum(R"re(-?[0-9]+(\.[0-9]+)?)re");
  for (auto it = std::sregex_iterator(s.begin(), s.end(), kNum); it != std::sregex_iterator(); ++it)
    v.push_back(std::stod(it->str()));
  return v;
}

// Coordinates are written with two decimals.
constexpr double kCoordTol = 0.0051;

}  // namespace

// ---------------------------------------------------------------------------------------------
// Ticks.
// ---------------------------------------------------------------------------------------------

TEST_CASE("decade ticks are exactly the powers of ten", "[plot]") {
  // Expected: the double nearest to each 10^k (C++ decimal literals round correctly).
  const std::vector<double> want = {1e-9, 1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1.0};
  const std::vector<double> got = plot::decade_ticks(1e-9, 1.0);
  REQUIRE(got.size() == want.size());
  for (std::size_t i = 0; i < want.size(); ++i) CHECK(got[i] == want[i]);

  CHECK(plot::decade_ticks(2e-3, 5e2) == std::vector<double>{1e-2, 1e-1, 1.0, 1e1, 1e2});
  CHECK(plot::decade_ticks(2.0, 9.0).empty());
  CHECK_THROWS_AS(plot::decade_ticks(0.0, 1.0), ConfigError);
  CHECK_THROWS_AS(plot::decade_ticks(1.0, 1.0), ConfigError);

  // A figure whose data span 3e-9..0.4 gets a log axis rounded out to whole decades, and with
  // 440 px for 9 decades every decade is labelled.
  const std::vector<double> x = {0.0, 1.0}, y = {3e-9, 0.4};
  const plot::Layout l =
      plot::Figure().y_axis({.label = "BER", .scale = plot::Scale::log10}).line(x, y).layout();
  CHECK(l.y_min == 1e-9);
  CHECK(l.y_max == 1.0);
  REQUIRE(l.y_ticks.size() == want.size());
  for (std::size_t i = 0; i < want.size(); ++i) CHECK(l.y_ticks[i] == want[i]);
}

TEST_CASE("nice linear ticks use steps of 1, 2 or 5 times a power of ten", "[plot]") {
  // Hand-derived from the rule (smallest 1-2-5 step giving at most max_ticks ticks over the
  // range rounded out to multiples of the step; "nice numbers" are common practice).
  SECTION("[0, 1], at most 6: step 0.1 gives 11 ticks, 0.2 gives 6") {
    const plot::LinearTicks t = plot::nice_ticks(0.0, 1.0, 6);
    CHECK(t.step == 0.2);
    REQUIRE(t.values.size() == 6);
    // Each value is the double nearest to its decimal: 3 * 0.2 would be 0.6000000000000001.
    const std::vector<double> want = {0.0, 0.2, 0.4, 0.6, 0.8, 1.0};
    for (std::size_t i = 0; i < 6; ++i) CHECK(t.values[i] == want[i]);
    CHECK(t.labels == std::vector<std::string>{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"});
  }
  SECTION("[-3.7, 12.1], at most 6: steps 1 (18 ticks) and 2 (10) are too fine, 5 gives 5") {
    const plot::LinearTicks t = plot::nice_ticks(-3.7, 12.1, 6);
    CHECK(t.step == 5.0);
    CHECK(t.lo == -5.0);
    CHECK(t.hi == 15.0);
    CHECK(t.values == std::vector<double>{-5, 0, 5, 10, 15});
    // Negative labels use the minus sign U+2212.
    CHECK(t.labels == std::vector<std::string>{"\xE2\x88\x92"
                                               "5",
                                               "0", "5", "10", "15"});
  }
  SECTION("[-3.7, 12.1], at most 10: step 2, from -4 to 14") {
    const plot::LinearTicks t = plot::nice_ticks(-3.7, 12.1, 10);
    CHECK(t.step == 2.0);
    CHECK(t.values == std::vector<double>{-4, -2, 0, 2, 4, 6, 8, 10, 12, 14});
  }
  SECTION("[0.1, 0.4] kept as given: 0.1 steps, labels without float noise") {
    const plot::LinearTicks t = plot::nice_ticks(0.1, 0.4, 5, false);
    CHECK(t.lo == 0.1);
    CHECK(t.hi == 0.4);
    CHECK(t.values == std::vector<double>{0.1, 0.2, 0.3, 0.4});
    CHECK(t.labels == std::vector<std::string>{"0.1", "0.2", "0.3", "0.4"});
  }
  SECTION("[-1, 1], at most 5: step 0.5 and an unsigned zero") {
    const plot::LinearTicks t = plot::nice_ticks(-1.0, 1.0, 5);
    CHECK(t.labels == std::vector<std::string>{"\xE2\x88\x92"
                                               "1.0",
                                               "\xE2\x88\x92"
                                               "0.5",
                                               "0.0", "0.5", "1.0"});
  }
  SECTION("large and small values switch to exponent labels") {
    CHECK(plot::nice_ticks(0.0, 2.5e6, 6).labels ==
          std::vector<std::string>{"0", "5e5", "1e6", "1.5e6", "2e6", "2.5e6"});
    CHECK(plot::nice_ticks(0.0, 3e-5, 4).labels == std::vector<std::string>{"0", "1e-5", "2e-5", "3e-5"});
    CHECK(plot::nice_ticks(0.0, 4e-4, 5).labels ==
          std::vector<std::string>{"0.0000", "0.0001", "0.0002", "0.0003", "0.0004"});
  }
  SECTION("bad ranges throw") {
    CHECK_THROWS_AS(plot::nice_ticks(1.0, 1.0, 5), ConfigError);
    CHECK_THROWS_AS(plot::nice_ticks(0.0, std::nan(""), 5), ConfigError);
    CHECK_THROWS_AS(plot::nice_ticks(0.0, 1.0, 1), ConfigError);
  }
}

TEST_CASE("rendered tick labels carry no float noise", "[plot]") {
  const std::vector<double> x = {0.0, 0.3, 0.7, 1.0}, y = {0.0, 0.1, 0.2, 0.3};
  const std::string svg = plot::Figure().line(x, y).svg();
  CHECK(svg.find(">0.3<") != std::string::npos);
  CHECK(svg.find("0.30000") == std::string::npos);
  CHECK(svg.find("0.6000") == std::string::npos);
  CHECK(svg.find("0.7000") == std::string::npos);
}

TEST_CASE("log axis labels: raised exponents or plain numbers", "[plot]") {
  const std::vector<double> x = {1.0, 2.0}, y = {1e-4, 1.0};
  const std::string sup = plot::Figure().y_axis({.scale = plot::Scale::log10}).line(x, y).svg();
  // "10" followed by a raised "−3" (U+2212).
  CHECK(sup.find(">10<tspan") != std::string::npos);
  CHECK(sup.find(">\xE2\x88\x92"
                 "3</tspan>") != std::string::npos);
  const std::string plain =
      plot::Figure()
          .y_axis({.scale = plot::Scale::log10, .log_labels = plot::LogLabels::e_notation})
          .line(x, y)
          .svg();
  CHECK(plain.find(">1e-4<") != std::string::npos);
  CHECK(plain.find(">0.01<") != std::string::npos);
  CHECK(plain.find(">1<") != std::string::npos);
}

// ---------------------------------------------------------------------------------------------
// Geometry.
// ---------------------------------------------------------------------------------------------

TEST_CASE("a data point lands on the pixel computed from the layout", "[plot]") {
  SECTION("explicit limits, log y") {
    const std::vector<double> x = {2.5}, y = {1e-3};
    plot::Figure f("Mapping");
    f.x_axis({.label = "x", .min = 0.0, .max = 10.0})
        .y_axis({.label = "y", .scale = plot::Scale::log10, .min = 1e-6, .max = 1.0})
        .points(x, y, {.marker = plot::Marker::circle});
    const plot::Layout l = f.layout();
    REQUIRE(l.x_min == 0.0);
    REQUIRE(l.x_max == 10.0);
    REQUIRE(l.y_min == 1e-6);
    REQUIRE(l.y_max == 1.0);
    // Linear x: a quarter of the way across; log y: log10(1e-3) is half way from -6 to 0.
    const double want_x = l.plot_left + 0.25 * l.plot_width;
    const double want_y = l.plot_top + 0.5 * l.plot_height;
    const std::string svg = f.svg();
    std::smatch m;
    REQUIRE(count_of(svg, "<circle ") == 1);
    REQUIRE(std::regex_search(svg, m, std::regex(R"re(<circle cx="([-0-9.]+)" cy="([-0-9.]+)")re")));
    CHECK(std::stod(m[1]) == Approx(want_x).margin(kCoordTol));
    CHECK(std::stod(m[2]) == Approx(want_y).margin(kCoordTol));
    // The plot area lies inside the picture with room for the labels.
    CHECK(l.plot_left > 40.0);
    CHECK(l.plot_top > 20.0);
    CHECK(l.plot_left + l.plot_width < 760.0);
    CHECK(l.plot_top + l.plot_height < 520.0 - 40.0);
  }
  SECTION("automatic limits, linear axes") {
    const std::vector<double> x = {-3.7, 12.1}, y = {0.13, 0.87};
    plot::Figure f;
    f.points(x, y, {.marker = plot::Marker::square, .marker_size = 8.0});
    const plot::Layout l = f.layout();
    // Automatic limits enclose the data and sit on the outer ticks.
    CHECK(l.x_min <= -3.7);
    CHECK(l.x_max >= 12.1);
    CHECK(l.x_min == l.x_ticks.front());
    CHECK(l.x_max == l.x_ticks.back());
    CHECK(l.y_min == l.y_ticks.front());
    CHECK(l.y_max == l.y_ticks.back());
    const std::string full = f.svg();
    const std::string svg = full.substr(full.find("</defs>"));  // after the clip rectangle
    std::vector<std::pair<double, double>> centres;
    const std::regex kRect(
        R"re(<rect x="([-0-9.]+)" y="([-0-9.]+)" width="([0-9.]+)" height="([0-9.]+)"/>)re");
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), kRect); it != std::sregex_iterator(); ++it) {
      const double w = std::stod((*it)[3]);
      centres.push_back({std::stod((*it)[1]) + 0.5 * w, std::stod((*it)[2]) + 0.5 * w});
    }
    REQUIRE(centres.size() == 2);
    for (std::size_t i = 0; i < 2; ++i) {
      const double want_x = l.plot_left + (x[i] - l.x_min) / (l.x_max - l.x_min) * l.plot_width;
      const double want_y = l.plot_top + (l.y_max - y[i]) / (l.y_max - l.y_min) * l.plot_height;
      CHECK(centres[i].first == Approx(want_x).margin(2 * kCoordTol));
      CHECK(centres[i].second == Approx(want_y).margin(2 * kCoordTol));
    }
  }
}

TEST_CASE("a step line turns at the next x (post) with exact corners", "[plot]") {
  const std::vector<double> x = {0.0, 1.0, 2.0}, y = {0.0, 1.0, 0.5};
  plot::Figure f;
  f.x_axis({.min = 0.0, .max = 2.0}).y_axis({.min = 0.0, .max = 1.0});
  f.step(x, y, {.color = plot::Color{1, 2, 3}});
  const plot::Layout l = f.layout();
  const std::string svg = f.svg();
  std::smatch m;
  REQUIRE(std::regex_search(svg, m, std::regex(R"re(<path d="(M[^"]*)" fill="none" stroke="#010203")re")));
  const std::vector<double> v = numbers_in(m[1]);
  const auto px = [&](double xv) { return l.plot_left + xv / 2.0 * l.plot_width; };
  const auto py = [&](double yv) { return l.plot_top + (1.0 - yv) * l.plot_height; };
  // (0,0) (1,0) (1,1) (2,1) (2,0.5)
  const std::vector<double> want = {px(0), py(0), px(1), py(0), px(1), py(1), px(2), py(1), px(2), py(0.5)};
  REQUIRE(v.size() == want.size());
  for (std::size_t i = 0; i < v.size(); ++i) CHECK(v[i] == Approx(want[i]).margin(kCoordTol));
}

TEST_CASE("error bars on a log axis: a zero low end becomes an upper bound", "[plot]") {
  // Point 1 has a two-sided interval; point 2 had no errors (rate 0, interval [0, 3e-6]).
  const std::vector<double> x = {1.0, 2.0}, y = {1e-3, 0.0};
  plot::Figure f;
  f.x_axis({.min = 0.0, .max = 3.0}).y_axis({.scale = plot::Scale::log10, .min = 1e-7, .max = 1.0});
  f.points(x, y, {.color = plot::Color{9, 9, 9}, .marker = plot::Marker::circle},
           {.low = {5e-4, 0.0}, .high = {2e-3, 3e-6}});
  const plot::Layout l = f.layout();
  const std::string svg = f.svg();
  CHECK(count_of(svg, "<circle ") == 1);  // the zero rate has no marker
  const auto px = [&](double xv) { return l.plot_left + xv / 3.0 * l.plot_width; };
  const auto py = [&](double yv) { return l.plot_top + (0.0 - std::log10(yv)) / 7.0 * l.plot_height; };
  const double bottom = l.plot_top + l.plot_height;
  std::smatch m;
  REQUIRE(std::regex_search(
      svg, m, std::regex(R"re(<path d="([^"]*)" fill="none" stroke="#090909" stroke-width="1.3")re")));
  const std::string bars = m[1];
  // Bars are "M x top V bottom" followed by caps "M x-c y H x+c".
  const std::regex kBar(R"re(M([-0-9.]+) ([-0-9.]+)V([-0-9.]+))re");
  std::vector<std::array<double, 3>> found;
  for (auto it = std::sregex_iterator(bars.begin(), bars.end(), kBar); it != std::sregex_iterator(); ++it)
    found.push_back({std::stod((*it)[1]), std::stod((*it)[2]), std::stod((*it)[3])});
  REQUIRE(found.size() == 2);
  CHECK(found[0][0] == Approx(px(1.0)).margin(kCoordTol));
  CHECK(found[0][1] == Approx(py(2e-3)).margin(kCoordTol));
  CHECK(found[0][2] == Approx(py(5e-4)).margin(kCoordTol));
  CHECK(found[1][0] == Approx(px(2.0)).margin(kCoordTol));
  CHECK(found[1][1] == Approx(py(3e-6)).margin(kCoordTol));
  CHECK(found[1][2] == Approx(bottom).margin(kCoordTol));
  // Caps: two for the closed interval, one (top) for the bound; one arrowhead at the bottom.
  CHECK(count_of(bars, "H") == 3);
  REQUIRE(std::regex_search(svg, m, std::regex(R"re(<path d="(M[^"]*Z)" fill="#090909" stroke="none")re")));
  const std::vector<double> head = numbers_in(m[1]);
  REQUIRE(head.size() >= 2);
  CHECK(head[0] == Approx(px(2.0)).margin(kCoordTol));
  CHECK(head[1] == Approx(bottom).margin(kCoordTol));
}

// ---------------------------------------------------------------------------------------------
// Robustness of the output.
// ---------------------------------------------------------------------------------------------

TEST_CASE("every kind of figure is well-formed standalone SVG 1.1", "[plot]") {
  std::mt19937 rng(11);
  std::normal_distribution<double> g(0.0, 1.0);
  std::vector<double> x, y, lo, hi;
  for (int i = 0; i < 40; ++i) {
    x.push_back(i * 0.5);
    y.push_back(0.5 * std::erfc(std::sqrt(std::pow(10.0, i * 0.05))));
    lo.push_back(y.back() * 0.7);
    hi.push_back(y.back() * 1.4);
  }
  std::vector<double> heat(30 * 20);
  for (double& v : heat) v = std::exp(g(rng));
  std::vector<plot::Figure> figs;
  figs.push_back(plot::Figure("Waterfall")
                     .x_axis({.label = "E_{b}/N_{0} [dB]"})
                     .y_axis({.label = "BER", .scale = plot::Scale::log10, .min = 1e-7, .max = 1})
                     .line(x, y, {.label = "theory", .dash = plot::Dash::dashed})
                     .points(x, y, {.label = "simulated"}, {.low = lo, .high = hi})
                     .band(x, lo, hi, {.label = "99.9 % band"})
                     .hline(1e-6, {.label = "target"})
                     .vline(3.0, {.label = "threshold"})
                     .text(5.0, 1e-2, "note ^{sup} _{sub}"));
  figs.push_back(
      plot::Figure("Steps and areas")
          .step(x, y, {.label = "step", .dash = plot::Dash::dash_dot})
          .area(x, hi, {.label = "area"})
          .line(x, lo, {.label = "dotted", .dash = plot::Dash::dotted, .marker = plot::Marker::diamond})
          .legend(plot::LegendPlace::outside_right));
  figs.push_back(plot::Figure("Density")
                     .heatmap({.columns = 30,
                               .rows = 20,
                               .values = heat,
                               .x_min = -1,
                               .x_max = 1,
                               .y_min = -1,
                               .y_max = 1,
                               .color_scale = plot::Scale::log10,
                               .colorbar_label = "count"})
                     .points(x, y, {.label = "points", .marker = plot::Marker::cross}));
  figs.push_back(
      plot::Figure("Bars")
          .x_axis({.label = "share [%]"})
          .bars({.categories = {"phase noise", "IQ imbalance", "quantisation"},
                 .groups = {{.label = "A", .values = {40, 35, 25}}, {.label = "B", .values = {30, 50, 20}}},
                 .value_suffix = " %"}));
  figs.push_back(
      plot::Figure("Vertical bars")
          .y_axis({.label = "EVM [%]"})
          .bars({.categories = {"a rather long category name", "another long category name", "short"},
                 .groups = {{.values = {3.0, -1.0, 2.0}}},
                 .horizontal = false}));
  figs.push_back(plot::Figure());  // empty

  for (const plot::Figure& f : figs) {
    const std::string svg = f.svg();
    INFO(svg.substr(0, 400));
    XmlChecker xml(svg);
    REQUIRE(xml.check().empty());
    CHECK(xml.root() == "svg");
    CHECK(svg.rfind("<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"760\" "
                    "height=\"520\" viewBox=\"0 0 760 520\"",
                    0) == 0);
    CHECK(svg.find("font-family=\"'DejaVu Sans', Verdana, sans-serif\"") != std::string::npos);
    CHECK(lower(svg).find("nan") == std::string::npos);
    CHECK(lower(svg).find("inf") == std::string::npos);
    // Every url(#id) points at an id of this figure, and ids are unique.
    const std::set<std::string> ids(xml.ids().begin(), xml.ids().end());
    CHECK(ids.size() == xml.ids().size());
    const std::regex kUrl(R"re(url\(#([^)]+)\))re");
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), kUrl); it != std::sregex_iterator(); ++it)
      CHECK(ids.count((*it)[1]) == 1);
  }
}

TEST_CASE("non-finite values and log-domain misses are skipped", "[plot]") {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  const std::vector<double> x = {0.0, 1.0, nan, 3.0, 4.0, inf, 6.0, 7.0};
  const std::vector<double> y = {1e-3, nan, 1e-2, -inf, 0.0, 1e-1, -1.0, 1e-4};
  // Drawable on a log y axis: indices 0 and 7 (the others have a non-finite or x,
  // or y <= 0).
  plot::Figure f;
  f.y_axis({.scale = plot::Scale::log10});
  f.line(x, y, {.label = "line"})
      .points(x, y, {.label = "points", .marker = plot::Marker::circle},
              {.low = {nan, 0, 0, 0, 0, 0, 0, 1e-5}, .high = {inf, 1, 1, 1, 1, 1, nan, 1e-3}})
      .step(x, y)
      .band(x, y, y)
      .area(x, y)
      .text(nan, 1.0, "lost")
      .text(1.0, inf, "lost too")
      .line(std::vector<double>{}, std::vector<double>{}, {.label = "empty series"});
  std::vector<double> heat = {nan, inf, -inf, 1.0};
  f.heatmap({.columns = 2, .rows = 2, .values = heat});
  const std::string svg = f.svg();
  REQUIRE(xml_problem(svg).empty());
  CHECK(lower(svg).find("nan") == std::string::npos);
  CHECK(lower(svg).find("inf") == std::string::npos);
  CHECK(count_of(svg, "<circle ") == 2 + 1);  // two data markers and the legend's
  CHECK(svg.find(">empty series<") != std::string::npos);
  CHECK(svg.find("lost") == std::string::npos);
}

TEST_CASE("extreme, constant and one-sided data still give a clean figure", "[plot]") {
  const std::vector<double> x = {-1e308, 0.0, 1e308, 5e-324, 1e-310, 2.0};
  const std::vector<double> y = {1e308, 5e-324, 1e-310, -1e308, 1.0, 1e-200};
  const std::vector<double> one = {3.0}, same = {2.0, 2.0}, near = {1.0, 1.0 + 1e-15};
  std::vector<plot::Figure> figs;
  figs.push_back(plot::Figure().line(x, y).points(x, y));
  figs.push_back(plot::Figure()
                     .x_axis({.scale = plot::Scale::log10})
                     .y_axis({.scale = plot::Scale::log10})
                     .line(x, y)
                     .points(x, y));
  figs.push_back(plot::Figure().points(one, one));
  figs.push_back(plot::Figure().line(same, same).line(near, near));
  figs.push_back(plot::Figure().y_axis({.min = 10.0}).line(same, same));  // min above the data
  figs.push_back(plot::Figure().y_axis({.scale = plot::Scale::log10, .max = 1e-3}).line(same, same));
  figs.push_back(plot::Figure().heatmap({.columns = 2, .rows = 1, .values = {5.0, 5.0}}));
  figs.push_back(plot::Figure().heatmap(
      {.columns = 2, .rows = 1, .values = {5e-324, 1e-310}, .color_scale = plot::Scale::log10}));
  figs.push_back(plot::Figure().heatmap({.columns = 2, .rows = 1, .values = {5.0, 6.0}, .value_max = 1.0}));
  figs.push_back(plot::Figure().bars({.categories = {"a"}, .groups = {{.values = {1e308}}}}));
  for (const plot::Figure& f : figs) {
    std::string svg;
    REQUIRE_NOTHROW(svg = f.svg());
    REQUIRE(xml_problem(svg).empty());
    CHECK(lower(svg).find("nan") == std::string::npos);
    CHECK(lower(svg).find("inf") == std::string::npos);
    const plot::Layout l = f.layout();
    CHECK(l.x_min < l.x_max);
    CHECK(l.y_min < l.y_max);
  }
}

TEST_CASE("text is XML-escaped and cleaned", "[plot]") {
  const std::vector<double> x = {0.0, 1.0}, y = {0.0, 1.0};
  plot::Figure f("R&D <test> \"quoted\" 'single'");
  f.x_axis({.label = "a<b>c"})
      .line(x, y, {.label = "x & y"})
      .text(0.5, 0.5, "<script>alert(1)</script>")
      .hline(0.5, {.label = "limit > 3 dB"});
  f.y_axis({.label = "bad \x01 bytes \xff\xfe and\ttab"});
  const std::string svg = f.svg();
  REQUIRE(xml_problem(svg).empty());
  CHECK(svg.find("R&amp;D &lt;test&gt; &quot;quoted&quot; &#39;single&#39;") != std::string::npos);
  CHECK(svg.find("a&lt;b&gt;c") != std::string::npos);
  CHECK(svg.find("x &amp; y") != std::string::npos);
  CHECK(svg.find("&lt;script&gt;") != std::string::npos);
  CHECK(svg.find("limit &gt; 3 dB") != std::string::npos);
  CHECK(svg.find("<script") == std::string::npos);
  CHECK(svg.find("<test>") == std::string::npos);
  // Malformed bytes become U+FFFD, the control character is dropped, the tab is a space.
  CHECK(svg.find("bad  bytes \xEF\xBF\xBD\xEF\xBF\xBD and tab") != std::string::npos);
}

TEST_CASE("ids carry a prefix that keeps inlined figures apart", "[plot]") {
  const std::vector<double> x = {0.0, 1.0}, y1 = {0.0, 1.0}, y2 = {1.0, 0.0};
  const plot::Figure a = plot::Figure("A").line(x, y1, {.label = "a"});
  const plot::Figure b = plot::Figure("B").line(x, y2, {.label = "b"});
  const auto ids = [](const std::string& svg) {
    XmlChecker xml(svg);
    REQUIRE(xml.check().empty());
    return std::set<std::string>(xml.ids().begin(), xml.ids().end());
  };
  const std::set<std::string> ia = ids(a.svg()), ib = ids(b.svg());
  REQUIRE_FALSE(ia.empty());
  for (const auto& id : ia) CHECK(ib.count(id) == 0);
  CHECK(a.svg() == a.svg());  // deterministic
  const std::string named = plot::Figure(a).id_prefix("fig-3").svg();
  for (const auto& id : ids(named)) CHECK(id.rfind("fig-3-", 0) == 0);
  CHECK(named.find("url(#fig-3-plot-area)") != std::string::npos);
  CHECK_THROWS_AS(plot::Figure().id_prefix(""), ConfigError);
  CHECK_THROWS_AS(plot::Figure().id_prefix("3d"), ConfigError);
  CHECK_THROWS_AS(plot::Figure().id_prefix("a b"), ConfigError);
  CHECK_THROWS_AS(plot::Figure().id_prefix("a\"b"), ConfigError);
}

// ---------------------------------------------------------------------------------------------
// Colours, heat maps, legends, bars.
// ---------------------------------------------------------------------------------------------

TEST_CASE("viridis matches the published table", "[plot]") {
  // Reference: matplotlib 3.6.3, matplotlib.colors.to_hex(matplotlib.cm.viridis(t)).
  CHECK(plot::viridis(0.0).hex() == "#440154");
  CHECK(plot::viridis(0.25).hex() == "#3b528b");
  CHECK(plot::viridis(0.5).hex() == "#21918c");
  CHECK(plot::viridis(0.75).hex() == "#5ec962");
  CHECK(plot::viridis(1.0).hex() == "#fde725");
  CHECK(plot::viridis(-3.0).hex() == "#440154");
  CHECK(plot::viridis(7.0).hex() == "#fde725");
}

TEST_CASE("the default palette is the Okabe-Ito set without yellow", "[plot]") {
  // From memory: Okabe & Ito, "Color Universal Design" (2008) sRGB values.
  const std::vector<std::string> want = {"#0072b2", "#d55e00", "#009e73", "#cc79a7",
                                         "#e69f00", "#56b4e9", "#000000"};
  for (std::size_t i = 0; i < want.size(); ++i) CHECK(plot::palette_color(i).hex() == want[i]);
  CHECK(plot::palette_color(7) == plot::palette_color(0));
  CHECK(plot::color_from_hex("#0072B2") == plot::Color{0x00, 0x72, 0xB2});
  CHECK(plot::color_from_hex("#fff") == plot::Color{255, 255, 255});
  CHECK_THROWS_AS(plot::color_from_hex("#12345"), ConfigError);
  CHECK_THROWS_AS(plot::color_from_hex("0072b2"), ConfigError);
  CHECK_THROWS_AS(plot::color_from_hex("#00zz00"), ConfigError);
}

TEST_CASE("heat maps merge equal cells of a row and scale colours by log10", "[plot]") {
  // Row 0 (bottom): four equal cells -> one rectangle. Row 1: 1, 10, 100 on a log scale
  // from 1 to 100 -> viridis(0), viridis(0.5), viridis(1); the zero stays blank.
  const std::vector<double> v = {1, 1, 1, 1, 1, 10, 100, 0};
  plot::Figure f;
  f.id_prefix("hm").heatmap({.columns = 4,
                             .rows = 2,
                             .values = v,
                             .x_min = 0,
                             .x_max = 4,
                             .y_min = 0,
                             .y_max = 2,
                             .color_scale = plot::Scale::log10,
                             .value_min = 1,
                             .value_max = 100});
  const plot::Layout l = f.layout();
  CHECK(l.x_min == 0.0);  // the grid's edges, not rounded outwards
  CHECK(l.x_max == 4.0);
  const std::string svg = f.svg();
  REQUIRE(xml_problem(svg).empty());
  const std::string cells = element_by_id(svg, "g", "hm-heatmap");
  REQUIRE_FALSE(cells.empty());
  CHECK(count_of(cells, "<rect ") == 4);
  CHECK(count_of(cells, "fill=\"#440154\"") == 2);
  CHECK(count_of(cells, "fill=\"#21918c\"") == 1);
  CHECK(count_of(cells, "fill=\"#fde725\"") == 1);
  // The merged bottom row spans the full width of the plot area.
  std::smatch m;
  REQUIRE(std::regex_search(
      cells, m,
      std::regex(
          R"re(<rect x="([0-9.]+)" y="([0-9.]+)" width="([0-9.]+)" height="([0-9.]+)" fill="#440154"/>)re")));
  CHECK(std::stod(m[1]) == Approx(l.plot_left).margin(kCoordTol));
  CHECK(std::stod(m[3]) == Approx(l.plot_width).margin(kCoordTol));
  CHECK(std::stod(m[4]) == Approx(0.5 * l.plot_height).margin(kCoordTol));
  CHECK_FALSE(element_by_id(svg, "g", "hm-colorbar").empty());
}

TEST_CASE("the automatic legend goes where there is no data", "[plot]") {
  const std::vector<double> x = {0.0, 10.0};
  const plot::Axis ax{.min = 0.0, .max = 10.0}, ay{.min = 0.0, .max = 10.0};
  // A rising diagonal crosses the top-right and bottom-left corners: top-left is next.
  CHECK(plot::Figure()
            .x_axis(ax)
            .y_axis(ay)
            .line(x, std::vector<double>{0.0, 10.0}, {.label = "rising"})
            .layout()
            .legend == plot::LegendPlace::top_left);
  // A falling line leaves the top-right corner free.
  CHECK(plot::Figure()
            .x_axis(ax)
            .y_axis(ay)
            .line(x, std::vector<double>{10.0, 0.0}, {.label = "falling"})
            .layout()
            .legend == plot::LegendPlace::top_right);
  // Points everywhere: the legend moves outside and the plot area narrows for it.
  std::vector<double> px, py;
  for (int i = 0; i <= 20; ++i)
    for (int j = 0; j <= 20; ++j) {
      px.push_back(i * 0.5);
      py.push_back(j * 0.5);
    }
  const plot::Figure full = plot::Figure().x_axis(ax).y_axis(ay).points(px, py, {.label = "grid"});
  const plot::Layout outside = full.layout();
  CHECK(outside.legend == plot::LegendPlace::outside_right);
  const plot::Layout hidden = plot::Figure(full).legend(plot::LegendPlace::hidden).layout();
  CHECK(hidden.legend == plot::LegendPlace::hidden);
  CHECK(outside.plot_width < hidden.plot_width - 60.0);
  // A fixed place is kept.
  CHECK(plot::Figure(full).legend(plot::LegendPlace::bottom_left).layout().legend ==
        plot::LegendPlace::bottom_left);
}

TEST_CASE("horizontal bars: lengths, labels and groups", "[plot]") {
  plot::Figure f("EVM budget");
  f.x_axis({.label = "share [%]", .min = 0.0, .max = 50.0})
      .bars({.categories = {"phase noise", "IQ imbalance", "thermal"},
             .groups = {{.values = {10.0, 20.0, 12.25}, .color = plot::Color{1, 1, 1}}},
             .value_decimals = 1,
             .value_suffix = " %"});
  const plot::Layout l = f.layout();
  CHECK(l.x_min == 0.0);
  CHECK(l.x_max == 50.0);
  CHECK(l.y_min == -0.5);
  CHECK(l.y_max == 2.5);
  const std::string svg = f.svg();
  REQUIRE(xml_problem(svg).empty());
  const std::regex kBar(
      R"re(<rect x="([0-9.]+)" y="([0-9.]+)" width="([0-9.]+)" height="([0-9.]+)" fill="#010101"/>)re");
  std::vector<double> widths;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), kBar); it != std::sregex_iterator(); ++it) {
    CHECK(std::stod((*it)[1]) == Approx(l.plot_left).margin(kCoordTol));
    widths.push_back(std::stod((*it)[3]));
  }
  REQUIRE(widths.size() == 3);
  CHECK(widths[0] == Approx(10.0 / 50.0 * l.plot_width).margin(2 * kCoordTol));
  CHECK(widths[1] == Approx(20.0 / 50.0 * l.plot_width).margin(2 * kCoordTol));
  CHECK(widths[2] == Approx(12.25 / 50.0 * l.plot_width).margin(2 * kCoordTol));
  for (const char* label : {">phase noise<", ">IQ imbalance<", ">thermal<", ">10.0 %<", ">20.0 %<"})
    CHECK(svg.find(label) != std::string::npos);
  // Values round half away from zero, as by hand: 12.25 -> 12.3.
  CHECK(svg.find(">12.3 %<") != std::string::npos);
  CHECK(svg.find("-legend") == std::string::npos);  // one group: no legend

  const plot::Figure grouped = plot::Figure().bars(
      {.categories = {"a", "b"},
       .groups = {{.label = "terminal one", .values = {1, 2}}, {.label = "terminal two", .values = {3, 4}}}});
  const std::string gs = grouped.svg();
  CHECK(gs.find(">terminal one<") != std::string::npos);
  CHECK(gs.find(">terminal two<") != std::string::npos);
  CHECK(count_of(gs, "fill=\"" + plot::palette_color(0).hex() + "\"") == 2 + 1);  // bars + swatch
  CHECK(count_of(gs, "fill=\"" + plot::palette_color(1).hex() + "\"") == 2 + 1);
}

TEST_CASE("misuse is rejected with ConfigError", "[plot]") {
  const std::vector<double> x3 = {1, 2, 3}, y2 = {1, 2};
  plot::Figure f;
  CHECK_THROWS_AS(f.line(x3, y2), ConfigError);
  CHECK_THROWS_AS(f.points(x3, x3, {}, {.low = {1, 2}, .high = {1, 2, 3}}), ConfigError);
  CHECK_THROWS_AS(f.points(x3, x3, {}, {.low = {}, .high = {1, 2, 3}}), ConfigError);
  CHECK_THROWS_AS(f.band(x3, x3, y2), ConfigError);
  CHECK_THROWS_AS(f.line(x3, x3, {.opacity = 2.0}), ConfigError);
  CHECK_THROWS_AS(f.y_axis({.scale = plot::Scale::log10, .min = 0.0}), ConfigError);
  CHECK_THROWS_AS(f.y_axis({.min = 2.0, .max = 1.0}), ConfigError);
  CHECK_THROWS_AS(f.x_axis({.max = std::numeric_limits<double>::infinity()}), ConfigError);
  CHECK_THROWS_AS(f.size(100, 100), ConfigError);
  CHECK_THROWS_AS(f.hline(std::nan("")), ConfigError);
  CHECK_THROWS_AS(f.heatmap({.columns = 2, .rows = 2, .values = {1, 2, 3}}), ConfigError);
  CHECK_THROWS_AS(f.heatmap({.columns = 1, .rows = 1, .values = {1}, .x_min = 1, .x_max = 1}), ConfigError);
  CHECK_THROWS_AS(
      f.heatmap(
          {.columns = 1, .rows = 1, .values = {1}, .color_scale = plot::Scale::log10, .value_min = 0.0}),
      ConfigError);
  CHECK_THROWS_AS(plot::Figure().bars({.categories = {"a", "b"}, .groups = {{.values = {1}}}}), ConfigError);
  CHECK_THROWS_AS(plot::Figure().line(x3, x3).bars({.categories = {"a"}, .groups = {{.values = {1}}}}),
                  ConfigError);
  CHECK_THROWS_AS(plot::Figure().bars({.categories = {"a"}, .groups = {{.values = {1}}}}).line(x3, x3),
                  ConfigError);
  CHECK_THROWS_AS(plot::Figure().bars({.categories = {"a"}, .groups = {{.values = {1}}}}).hline(1.0),
                  ConfigError);
  try {
    f.line(x3, y2);
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "y length");
    CHECK(e.value() == "2");
  }
}

// ---------------------------------------------------------------------------------------------
// Atomic writes.
// ---------------------------------------------------------------------------------------------

namespace {
namespace fs = std::filesystem;

struct TempDir {
  fs::path path;
  TempDir() {
    std::random_device rd;
    path = fs::temp_directory_path() / ("qamsight-plot-test-" + std::to_string(rd()) + std::to_string(rd()));
    fs::create_directories(path);
  }
  ~TempDir() {
    std::error_code ec;
    fs::permissions(path, fs::perms::owner_all, fs::perm_options::add, ec);
    fs::remove_all(path, ec);
  }
  std::vector<std::string> entries() const {
    std::vector<std::string> out;
    for (const auto& e : fs::directory_iterator(path)) out.push_back(e.path().filename().string());
    std::sort(out.begin(), out.end());
    return out;
  }
};

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

bool message_names(const InputError& e, const std::string& path) {
  return std::string(e.what()).find(path) != std::string::npos;
}
}  // namespace

TEST_CASE("write_svg_file replaces the file whole and leaves nothing on failure", "[plot]") {
  TempDir dir;
  const std::string svg = plot::Figure("file").svg();
  const fs::path target = dir.path / "figure.svg";

  SECTION("writes, overwrites, and leaves no temporary file") {
    plot::write_svg_file(target.string(), "old contents that are longer than the new ones .....");
    plot::write_svg_file(target.string(), svg);
    CHECK(slurp(target) == svg);
    CHECK(dir.entries() == std::vector<std::string>{"figure.svg"});
  }
  SECTION("a directory that cannot be written") {
    const fs::path locked = dir.path / "locked";
    fs::create_directory(locked);
    fs::permissions(locked, fs::perms::owner_read | fs::perms::owner_exec, fs::perm_options::replace);
    // Privileged users (root in a container) write anyway; then this case cannot be shown.
    const bool enforced = !std::ofstream(locked / "probe").good();
    std::error_code ec;
    fs::remove(locked / "probe", ec);
    if (!enforced) {
      WARN("directory permissions are not enforced for this user; skipping the locked case");
    } else {
      const std::string path = (locked / "figure.svg").string();
      try {
        plot::write_svg_file(path, svg);
        FAIL("no InputError");
      } catch (const InputError& e) {
        CHECK(message_names(e, path));
      }
      CHECK(fs::is_empty(locked));
    }
  }
  SECTION("a parent that is a regular file") {
    plot::write_svg_file((dir.path / "plain").string(), "x");
    const std::string path = (dir.path / "plain" / "figure.svg").string();
    try {
      plot::write_svg_file(path, svg);
      FAIL("no InputError");
    } catch (const InputError& e) {
      CHECK(message_names(e, path));
    }
    CHECK(dir.entries() == std::vector<std::string>{"plain"});
    CHECK(slurp(dir.path / "plain") == "x");
  }
  SECTION("a target that is a directory: the rename fails, the temporary file is removed") {
    fs::create_directory(dir.path / "taken");
    const std::string path = (dir.path / "taken").string();
    try {
      plot::write_svg_file(path, svg);
      FAIL("no InputError");
    } catch (const InputError& e) {
      CHECK(message_names(e, path));
    }
    CHECK(dir.entries() == std::vector<std::string>{"taken"});
    CHECK(fs::is_directory(dir.path / "taken"));
  }
  SECTION("an empty path") { CHECK_THROWS_AS(plot::write_svg_file("", svg), InputError); }
}
