// Tests of sigmf: datatypes, writer -> reader round trips, raw IQ files, malformed recordings.
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/sigmf.hpp"

using namespace qamsight;
using Catch::Matchers::Contains;

namespace {

std::string temp_dir() {
  const auto dir = std::filesystem::temp_directory_path() / "qamsight_test_sigmf";
  std::filesystem::create_directories(dir);
  return dir.string();
}

std::string write_file(const std::string& name, const std::string& content) {
  const std::string path = temp_dir() + "/" + name;
  std::ofstream(path, std::ios::binary) << content;
  return path;
}

std::string bytes_of(std::initializer_list<int> b) {
  std::string s;
  for (int v : b) s.push_back(static_cast<char>(v));
  return s;
}

std::vector<cf32> random_samples(std::size_t n, double sigma, std::uint64_t seed) {
  RandomStream rs(seed, 0, Substream::user);
  std::vector<cf32> x(n);
  rs.fill_complex_gaussian(x, sigma * sigma);
  return x;
}

// A recording NAME with the given metadata text and data bytes.
std::string recording(const std::string& name, const std::string& meta, const std::string& data) {
  write_file(name + ".sigmf-data", data);
  write_file(name + ".sigmf-meta", meta);
  return temp_dir() + "/" + name;
}

std::string meta_with(const std::string& global, const std::string& rest = "") {
  return "{\"global\": {" + global + "}" + rest + "}";
}

const std::string kGood = "\"core:datatype\": \"ci16_le\", \"core:sample_rate\": 1e6, \"core:version\": \"1.0.0\"";

}  // namespace

TEST_CASE("sigmf: datatype names (SigMF core:datatype spelling)", "[sigmf]") {
  for (const char* n : {"cf32_le", "cf32_be", "cf64_le", "cf64_be", "ci32_le", "ci32_be", "ci16_le", "ci16_be", "ci8",
                        "cu32_le", "cu32_be", "cu16_le", "cu16_be", "cu8"}) {
    const auto t = parse_iq_datatype(n);
    REQUIRE(t);
    CHECK(t->name() == n);
  }
  CHECK(parse_iq_datatype("cf32_le")->sample_bytes() == 8);
  CHECK(parse_iq_datatype("ci16_le")->sample_bytes() == 4);
  CHECK(parse_iq_datatype("cu8")->sample_bytes() == 2);
  CHECK_FALSE(parse_iq_datatype("rf32_le"));  // real-valued
  CHECK_FALSE(parse_iq_datatype("ci8_le"));   // 8-bit types have no byte order
  CHECK_FALSE(parse_iq_datatype("cf16_le"));
  CHECK_FALSE(parse_iq_datatype(""));
}

TEST_CASE("sigmf: decoding known bytes (IEEE 754, two's complement, byte order)", "[sigmf]") {
  std::vector<cf32> out(1);
  auto decode = [&](const std::string& type, const std::string& b, double fs = 1.0) {
    const auto t = parse_iq_datatype(type);
    REQUIRE(t);
    decode_iq(std::span<const std::uint8_t>(reinterpret_cast<const std::uint8_t*>(b.data()), b.size()), *t, fs, out);
    return out[0];
  };
  // 1.0f = 0x3f800000, -2.0f = 0xc0000000 (IEEE 754 binary32).
  CHECK(decode("cf32_le", bytes_of({0, 0, 0x80, 0x3f, 0, 0, 0, 0xc0})) == cf32(1.0f, -2.0f));
  CHECK(decode("cf32_be", bytes_of({0x3f, 0x80, 0, 0, 0xc0, 0, 0, 0})) == cf32(1.0f, -2.0f));
  // 0.5 = 0x3fe0000000000000 (binary64).
  CHECK(decode("cf64_le", bytes_of({0, 0, 0, 0, 0, 0, 0xe0, 0x3f, 0, 0, 0, 0, 0, 0, 0xe0, 0xbf})) == cf32(0.5f, -0.5f));
  // ci16: 0x4000 = 16384 -> 0.5 of full scale 2^15; 0xc000 = -16384.
  CHECK(decode("ci16_le", bytes_of({0x00, 0x40, 0x00, 0xc0})) == cf32(0.5f, -0.5f));
  CHECK(decode("ci16_be", bytes_of({0x40, 0x00, 0xc0, 0x00})) == cf32(0.5f, -0.5f));
  CHECK(decode("ci16_le", bytes_of({0x00, 0x40, 0x00, 0xc0}), 4.0) == cf32(2.0f, -2.0f));
  CHECK(decode("ci8", bytes_of({0x40, 0x80})) == cf32(0.5f, -1.0f));
  CHECK(decode("ci32_le", bytes_of({0, 0, 0, 0x40, 0, 0, 0, 0xc0})) == cf32(0.5f, -0.5f));
  // cu8: code range centre 127.5 is zero; 255 -> 127.5/128, 0 -> -127.5/128.
  CHECK(decode("cu8", bytes_of({255, 0})) == cf32(127.5f / 128.0f, -127.5f / 128.0f));
  CHECK(decode("cu16_le", bytes_of({0xff, 0xff, 0, 0})) == cf32(32767.5f / 32768.0f, -32767.5f / 32768.0f));
}

TEST_CASE("sigmf: writer -> reader round trip, cf32 bit-exact, metadata fields", "[sigmf]") {
  const auto x = random_samples(10007, 0.7, 1);
  SigmfWriteSpec spec;
  spec.datatype = "cf32_le";
  spec.sample_rate_hz = 2.5e6;
  spec.center_frequency_hz = 2.2e9;
  spec.description = "round trip";
  spec.author = "test";
  spec.annotations = {{10, 100, "first", "c1"}, {5000, 20, "second", ""}};
  const std::string name = temp_dir() + "/roundtrip_cf32";
  write_sigmf(name, x, spec, R"({"qamsight:extra": {"a": 1}})");
  CHECK(std::filesystem::file_size(name + ".sigmf-data") == x.size() * 8);
  const Recording r = read_sigmf(name + ".sigmf-meta");
  REQUIRE(r.samples.size() == x.size());
  CHECK(std::memcmp(r.samples.data(), x.data(), x.size() * sizeof(cf32)) == 0);
  CHECK(r.sample_rate_hz == 2.5e6);
  CHECK(r.center_frequency_hz == 2.2e9);
  CHECK(r.datatype.name() == "cf32_le");
  CHECK(r.version == "1.0.0");
  CHECK(r.description == "round trip");
  CHECK(r.author == "test");
  REQUIRE(r.annotations.size() == 2);
  CHECK(r.annotations[0].sample_start == 10);
  CHECK(r.annotations[0].sample_count == 100);
  CHECK(r.annotations[0].label == "first");
  CHECK(r.annotations[0].comment == "c1");
  const auto g = nlohmann::json::parse(r.global_json);
  CHECK(g.at("qamsight:extra").at("a") == 1);
  CHECK(g.at("core:extensions").at(0).at("name") == "qamsight");
  // The other spellings of the name find the same recording.
  CHECK(read_sigmf(name).samples.size() == x.size());
  CHECK(read_sigmf(name + ".sigmf-data").samples.size() == x.size());
  // No temporary files are left behind.
  std::size_t others = 0;
  for (const auto& e : std::filesystem::directory_iterator(temp_dir())) {
    others += e.path().filename().string().find("roundtrip_cf32.sigmf-data.tmp") != std::string::npos;
  }
  CHECK(others == 0);
}

TEST_CASE("sigmf: ci16 round trip within half a quantisation step; clipping counted", "[sigmf]") {
  const auto x = random_samples(20000, 0.25, 2);  // per-rail RMS 0.177; full scale 1 = 15 dB headroom
  SigmfWriteSpec spec;
  spec.datatype = "ci16_le";
  spec.sample_rate_hz = 1e6;
  spec.full_scale = 1.0;
  const std::string name = temp_dir() + "/roundtrip_ci16";
  SigmfWriter w(name, spec);
  w.append(x);
  std::vector<cf32> big = {cf32(2.0f, 0.0f), cf32(0.0f, -3.0f)};  // beyond full scale
  w.append(big);
  CHECK(w.clipped_components() == 2);
  w.finish();
  const Recording r = read_sigmf(name);
  REQUIRE(r.samples.size() == x.size() + 2);
  const double step = 1.0 / 32768.0;
  double worst = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    worst = std::max({worst, double(std::abs(r.samples[i].real() - x[i].real())), double(std::abs(r.samples[i].imag() - x[i].imag()))});
  }
  CHECK(worst <= 0.5 * step * (1.0 + 1e-6));
  CHECK(r.samples[x.size()].real() == Approx(32767.0 / 32768.0));  // clipped symmetrically
  CHECK(r.samples[x.size() + 1].imag() == Approx(-32767.0 / 32768.0));

  // A full scale other than 1 is recorded and undone by the reader.
  spec.full_scale = 0.5;
  write_sigmf(name, x, spec);
  const Recording r2 = read_sigmf(name);
  CHECK(r2.full_scale == 0.5);
  double worst2 = 0.0;
  std::size_t inside = 0;
  const float edge = 0.5f * 32767.0f / 32768.0f;
  for (std::size_t i = 0; i < x.size(); ++i) {
    if (std::abs(x[i].real()) >= edge || std::abs(x[i].imag()) >= edge) continue;  // clipped there
    ++inside;
    worst2 = std::max({worst2, std::abs(double(r2.samples[i].real()) - x[i].real()),
                       std::abs(double(r2.samples[i].imag()) - x[i].imag())});
  }
  CHECK(inside > x.size() * 9 / 10);
  CHECK(worst2 <= 0.5 * 0.5 / 32768.0 * (1.0 + 1e-5));
}

TEST_CASE("sigmf: other datatypes round trip through encode/decode", "[sigmf]") {
  const auto x = random_samples(500, 0.2, 3);
  for (const char* type : {"cf64_le", "cf64_be", "cf32_be", "ci32_le", "ci16_be", "ci8", "cu8", "cu16_le"}) {
    INFO(type);
    const auto t = parse_iq_datatype(type);
    REQUIRE(t);
    std::vector<std::uint8_t> bytes(x.size() * t->sample_bytes());
    CHECK(encode_iq(x, *t, 1.0, bytes) == 0);
    std::vector<cf32> back(x.size());
    decode_iq(bytes, *t, 1.0, back);
    const double step = t->number == IqNumber::floating ? 0.0 : std::ldexp(1.0, 1 - static_cast<int>(t->bits));
    double worst = 0.0;
    for (std::size_t i = 0; i < x.size(); ++i) {
      worst = std::max({worst, std::abs(double(back[i].real()) - x[i].real()), std::abs(double(back[i].imag()) - x[i].imag())});
    }
    // Half a step, plus the float rounding of the decoded value (32-bit codes exceed float precision).
    CHECK(worst <= 0.5 * step + 1e-7);
  }
}

TEST_CASE("sigmf: several captures and annotations are tolerated; header bytes skipped", "[sigmf]") {
  // 6 ci8 samples: two captures at 0 and 4, the second preceded by 3 header bytes.
  const std::string data = bytes_of({1, 2, 3, 4, 5, 6, 7, 8, 0x55, 0x55, 0x55, 9, 10, 11, 12});
  const std::string meta = meta_with(
      "\"core:datatype\": \"ci8\", \"core:sample_rate\": 48000, \"core:version\": \"1.0.0\"",
      ", \"captures\": [{\"core:sample_start\": 0, \"core:frequency\": 1.5e9}, "
      "{\"core:sample_start\": 4, \"core:frequency\": 1.6e9, \"core:header_bytes\": 3}], "
      "\"annotations\": [{\"core:sample_start\": 0, \"core:sample_count\": 2}, {\"core:sample_start\": 3, "
      "\"core:label\": \"x\"}, {\"core:sample_start\": 5, \"core:sample_count\": 1}]");
  const Recording r = read_sigmf(recording("captures", meta, data));
  REQUIRE(r.samples.size() == 6);
  CHECK(r.samples[0] == cf32(1.0f / 128, 2.0f / 128));
  CHECK(r.samples[3] == cf32(7.0f / 128, 8.0f / 128));
  CHECK(r.samples[4] == cf32(9.0f / 128, 10.0f / 128));
  CHECK(r.captures.size() == 2);
  CHECK(r.center_frequency_hz == 1.5e9);
  CHECK(r.captures[1].frequency_hz == 1.6e9);
  CHECK(r.annotations.size() == 3);
  CHECK(r.annotations[1].label == "x");
  // No captures at all: one capture at 0 with an unknown frequency.
  const Recording r2 = read_sigmf(recording("nocaptures", meta_with(kGood), bytes_of({0, 0, 0, 0})));
  CHECK(r2.captures.size() == 1);
  CHECK(std::isnan(r2.center_frequency_hz));
  // core:dataset names a data file of another name (SigMF non-conforming dataset).
  write_file("other.bin", bytes_of({0, 0x40, 0, 0xc0}));
  const Recording r3 = read_sigmf(recording("dataset", meta_with(kGood + ", \"core:dataset\": \"other.bin\""), ""));
  REQUIRE(r3.samples.size() == 1);
  CHECK(r3.samples[0] == cf32(0.5f, -0.5f));
}

TEST_CASE("sigmf: malformed recordings throw InputError naming the file and the key", "[sigmf]") {
  const std::string four = bytes_of({0, 0, 0, 0});
  auto fails = [](const std::string& name, const std::string& what) {
    INFO(name << ": " << what);
    CHECK_THROWS_AS(read_sigmf(name), InputError);
    CHECK_THROWS_WITH(read_sigmf(name), Contains(what));
    CHECK_THROWS_WITH(read_sigmf(name), Contains(std::filesystem::path(name).filename().string()));
  };
  // Missing data file.
  write_file("nodata.sigmf-meta", meta_with(kGood));
  std::filesystem::remove(temp_dir() + "/nodata.sigmf-data");
  fails(temp_dir() + "/nodata", "nodata.sigmf-data");
  fails(temp_dir() + "/nodata", "no such file");
  // Missing metadata file.
  CHECK_THROWS_AS(read_sigmf(temp_dir() + "/does-not-exist"), InputError);
  // Unknown, real-valued, missing or non-string datatype.
  fails(recording("unknowntype", meta_with("\"core:datatype\": \"cq16\", \"core:sample_rate\": 1e6"), four),
        "core:datatype");
  fails(recording("realtype", meta_with("\"core:datatype\": \"rf32_le\", \"core:sample_rate\": 1e6"), four),
        "rf32_le");
  fails(recording("notype", meta_with("\"core:sample_rate\": 1e6"), four), "core:datatype");
  fails(recording("numtype", meta_with("\"core:datatype\": 16, \"core:sample_rate\": 1e6"), four), "core:datatype");
  // Data size not a multiple of the sample size (ci16: 4 bytes).
  fails(recording("oddsize", meta_with(kGood), bytes_of({0, 0, 0, 0, 0, 0})), "not a multiple");
  fails(recording("oddsize", meta_with(kGood), bytes_of({0, 0, 0, 0, 0, 0})), "core:datatype");
  // Empty data.
  fails(recording("empty", meta_with(kGood), ""), "no samples");
  // Bad JSON, not an object, no global.
  fails(recording("badjson", "{\"global\": {\"core:datatype\": ", four), "malformed JSON");
  fails(recording("array", "[1, 2]", four), "not a JSON object");
  fails(recording("noglobal", "{\"captures\": []}", four), "global");
  // Missing, non-numeric, zero, negative, absurdly large sample rates.
  fails(recording("norate", meta_with("\"core:datatype\": \"ci16_le\""), four), "core:sample_rate");
  for (const char* rate : {"\"fast\"", "0", "-48000", "1e15", "null"}) {
    fails(recording("badrate", meta_with(std::string("\"core:datatype\": \"ci16_le\", \"core:sample_rate\": ") + rate),
                    four),
          "core:sample_rate");
  }
  // Captures: negative, beyond the file, out of order, not an integer, not an array.
  fails(recording("negstart", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": -4}]"), four),
        "captures[0].core:sample_start");
  fails(recording("negstart", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": -4}]"), four), "negative");
  fails(recording("farstart", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": 7}]"), four),
        "beyond the data");
  fails(recording("order", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": 1}, {\"core:sample_start\": 0}]"),
                  four + four),
        "captures[1].core:sample_start");
  fails(recording("fracstart", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": 0.5}]"), four),
        "core:sample_start");
  fails(recording("capobj", meta_with(kGood, ", \"captures\": {}"), four), "captures");
  fails(recording("header", meta_with(kGood, ", \"captures\": [{\"core:sample_start\": 0, \"core:header_bytes\": 9}]"),
                  four),
        "header_bytes");
  // Annotations: negative start, beyond the file, running past the end, missing start.
  fails(recording("annneg", meta_with(kGood, ", \"annotations\": [{\"core:sample_start\": -1}]"), four),
        "annotations[0].core:sample_start");
  fails(recording("annfar", meta_with(kGood, ", \"annotations\": [{\"core:sample_start\": 1}]"), four),
        "annotations[0].core:sample_start");
  fails(recording("annlong",
                  meta_with(kGood, ", \"annotations\": [{\"core:sample_start\": 0, \"core:sample_count\": 3}]"),
                  four + four),
        "annotations[0].core:sample_count");
  fails(recording("annmissing", meta_with(kGood, ", \"annotations\": [{\"core:label\": \"a\"}]"), four),
        "annotations[0].core:sample_start");
  // Wrong types of optional keys.
  fails(recording("descr", meta_with(kGood + ", \"core:description\": 5"), four), "core:description");
  fails(recording("freq", meta_with(kGood, ", \"captures\": [{\"core:frequency\": \"high\"}]"), four),
        "captures[0].core:frequency");
  // Too many samples for the limit.
  RecordingReadOptions small;
  small.max_samples = 1;
  CHECK_THROWS_WITH(read_sigmf(recording("toolarge", meta_with(kGood), four + four), small), Contains("limit"));
}

TEST_CASE("sigmf: raw IQ files with explicit settings", "[sigmf]") {
  const std::string path = write_file("raw.iq", bytes_of({0x00, 0x40, 0x00, 0xc0, 0x00, 0x20, 0x00, 0x00}));
  RawIqSpec spec;
  spec.datatype = "ci16_le";
  spec.sample_rate_hz = 3.2e6;
  const Recording r = read_raw_iq(path, spec);
  REQUIRE(r.samples.size() == 2);
  CHECK(r.samples[0] == cf32(0.5f, -0.5f));
  CHECK(r.samples[1] == cf32(0.25f, 0.0f));
  CHECK(r.sample_rate_hz == 3.2e6);
  spec.header_bytes = 4;
  CHECK(read_raw_iq(path, spec).samples.size() == 1);
  spec.header_bytes = 2;
  CHECK_THROWS_WITH(read_raw_iq(path, spec), Contains("not a multiple"));
  spec.header_bytes = 0;
  spec.datatype = "ci12";
  CHECK_THROWS_AS(read_raw_iq(path, spec), ConfigError);
  spec.datatype = "ci16_le";
  spec.sample_rate_hz = 0.0;
  CHECK_THROWS_AS(read_raw_iq(path, spec), ConfigError);
  spec.sample_rate_hz = 1e6;
  spec.datatype = "cf32_le";
  const std::string odd = write_file("raw_odd.iq", bytes_of({0, 0, 0, 0, 0, 0}));
  CHECK_THROWS_WITH(read_raw_iq(odd, spec), Contains("raw_odd.iq"));
  CHECK_THROWS_AS(read_raw_iq(temp_dir() + "/no-such.iq", spec), InputError);
}

TEST_CASE("sigmf: writer configuration errors", "[sigmf]") {
  SigmfWriteSpec spec;
  spec.datatype = "cf16";
  CHECK_THROWS_AS(SigmfWriter(temp_dir() + "/w", spec), ConfigError);
  spec = {};
  spec.sample_rate_hz = -1.0;
  CHECK_THROWS_AS(SigmfWriter(temp_dir() + "/w", spec), ConfigError);
  spec = {};
  spec.full_scale = 0.0;
  CHECK_THROWS_AS(SigmfWriter(temp_dir() + "/w", spec), ConfigError);
  spec = {};
  CHECK_THROWS_AS(SigmfWriter(temp_dir() + "/no/such/folder/w", spec), InputError);
  {
    SigmfWriter w(temp_dir() + "/abandoned", spec);  // destroyed without finish: no output
    w.append(random_samples(10, 1.0, 4));
  }
  CHECK_FALSE(std::filesystem::exists(temp_dir() + "/abandoned.sigmf-data"));
  CHECK_FALSE(std::filesystem::exists(temp_dir() + "/abandoned.sigmf-meta"));
}
