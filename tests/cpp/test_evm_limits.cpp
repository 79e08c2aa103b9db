// Tests of evm_limits: table rows and flags against REFERENCES.md section 3, limit parsing,
// verdicts, and that docs/evm-limits.md lists every row as generated.
#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <sstream>
#include <string>

#include "qamsight/evm_limits.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

TEST_CASE("3GPP rows carry the values and flags of REFERENCES.md 3.1 and 3.2", "[evm_limits]") {
  // REFERENCES.md 3.1: TS 38.104 Table 6.5.2.2-1, QPSK 17.5 %, 16QAM 12.5 %, 64QAM 8 %,
  // 256QAM 3.5 % [PARTIAL]; 1024QAM 2.5 % Rel-17 [MEMORY]. 3.2: TS 36.104 Table 6.5.2-1, same
  // values, all [MEMORY]. dB values [COMPUTED] there: -15.14, -18.06, -21.94, -29.12, -32.04.
  const struct {
    const char* mod;
    double pct, db;
    LimitProvenance nr;
  } rows[] = {{"qpsk", 17.5, -15.14, LimitProvenance::partial},
              {"16qam", 12.5, -18.06, LimitProvenance::partial},
              {"64qam", 8.0, -21.94, LimitProvenance::partial},
              {"256qam", 3.5, -29.12, LimitProvenance::partial},
              {"1024qam", 2.5, -32.04, LimitProvenance::from_memory}};
  for (const auto& r : rows) {
    INFO(r.mod);
    const auto& nr = evm_limit_table("3gpp-nr-bs").row(r.mod);
    CHECK(nr.limit_pct == r.pct);
    CHECK(std::abs(nr.limit_db - r.db) <= 0.005);
    CHECK(nr.provenance == r.nr);
    CHECK(nr.document == "3GPP TS 38.104");
    CHECK(nr.table == "Table 6.5.2.2-1");
    const auto& lte = evm_limit_table("3gpp-lte-bs").row(r.mod);
    CHECK(lte.limit_pct == r.pct);
    CHECK(lte.provenance == LimitProvenance::from_memory);
    CHECK(lte.table == "Table 6.5.2-1");
  }
  CHECK(evm_limit_table("3gpp-nr-bs").row("1024qam").edition.find("Rel-17") != std::string::npos);
  CHECK(evm_limit_table("3gpp-nr-bs").row("16-QAM").limit_pct == 12.5);  // spelling variants
}

TEST_CASE("IEEE 802.11 rows per PHY, with the 64QAM 5/6 open point", "[evm_limits]") {
  // REFERENCES.md 3.4 (all [MEMORY]); percent equivalents [COMPUTED] there.
  CHECK(evm_limit_table("ieee-802.11-ofdm").row("bpsk", "1/2").limit_db == -5.0);
  CHECK(evm_limit_table("ieee-802.11-ofdm").row("bpsk", "3/4").limit_db == -8.0);
  CHECK(evm_limit_table("ieee-802.11-ofdm").row("64qam", "3/4").limit_db == -25.0);
  CHECK(std::abs(evm_limit_table("ieee-802.11-ofdm").row("64qam", "2/3").limit_pct - 7.94) <= 0.005);
  CHECK(evm_limit_table("ieee-802.11-ht").row("64qam", "5/6").limit_db == -28.0);
  CHECK(evm_limit_table("ieee-802.11-vht").row("64qam", "5/6").limit_db == -27.0);
  CHECK(evm_limit_table("ieee-802.11-he").row("64qam", "5/6").limit_db == -27.0);
  CHECK(std::abs(evm_limit_table("ieee-802.11-vht").row("64qam", "5/6").limit_pct - 4.47) <= 0.005);
  CHECK(evm_limit_table("ieee-802.11-vht").row("256qam", "3/4").limit_db == -30.0);
  CHECK(evm_limit_table("ieee-802.11-vht").row("256qam", "0.8333333333333334").limit_db == -32.0);
  CHECK(evm_limit_table("ieee-802.11-he").row("1024qam", "3/4").limit_db == -35.0);
  CHECK(std::abs(evm_limit_table("ieee-802.11-he").row("1024qam", "5/6").limit_pct - 1.78) <= 0.005);
  CHECK(evm_limit_table("ieee-802.11-eht").row("4096qam", "5/6").limit_db == -38.0);
  CHECK(evm_limit_table("ieee-802.11-ht").row("64qam", "5/6").note.find("open point") != std::string::npos);
  for (const auto& t : evm_limit_tables()) {
    if (t.name.rfind("ieee", 0) != 0) continue;
    CHECK(t.has_rates);
    for (const auto& r : t.rows) {
      CHECK(r.provenance == LimitProvenance::from_memory);
      CHECK(r.stated_in_db);
      CHECK(std::abs(r.limit_pct - 100.0 * std::pow(10.0, r.limit_db / 20.0)) <= 1e-12 * r.limit_pct);
    }
  }
  // HT has no BPSK 3/4 (not an HT MCS)
  CHECK_THROWS_AS(evm_limit_table("ieee-802.11-ht").row("bpsk", "3/4"), ConfigError);
}

TEST_CASE("table lookups reject what does not exist", "[evm_limits]") {
  CHECK_THROWS_AS(evm_limit_table("3gpp-umts"), ConfigError);
  CHECK_THROWS_AS(evm_limit_table("3gpp-nr-bs").row("bpsk"), ConfigError);
  CHECK_THROWS_AS(evm_limit_table("3gpp-nr-bs").row("64qam", "3/4"), ConfigError);  // no rates there
  CHECK_THROWS_AS(evm_limit_table("ieee-802.11-vht").row("64qam"), ConfigError);      // rate needed
  CHECK_THROWS_AS(evm_limit_table("ieee-802.11-vht").row("64qam", "7/8"), ConfigError);
  try {
    (void)evm_limit_table("ieee-802.11-vht").row("64qam", "1/2");
    FAIL("no throw");
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "rate");
    CHECK(e.allowed().find("2/3") != std::string::npos);
  }
}

TEST_CASE("user limits in percent and dB", "[evm_limits]") {
  CHECK(parse_evm_limit("8%").pct == 8.0);
  CHECK(std::abs(parse_evm_limit("8%").db - 20.0 * std::log10(0.08)) <= 1e-12);
  CHECK(parse_evm_limit("8 %").pct == 8.0);
  CHECK(parse_evm_limit("-22dB").db == -22.0);
  CHECK(std::abs(parse_evm_limit("-22 dB").pct - 7.943282347242815) <= 1e-12);
  CHECK(parse_evm_limit("-22db").db == -22.0);
  for (const char* bad : {"8", "", "%", "abc", "-22", "0%", "120%", "3dB", "8%%", "nan%", "-22 dBm"}) {
    INFO(bad);
    CHECK_THROWS_AS(parse_evm_limit(bad), ConfigError);
  }
  const auto t = evm_limit_from_table("3gpp-nr-bs", "64qam");
  CHECK(t.pct == 8.0);
  CHECK(t.source.find("Table 6.5.2.2-1") != std::string::npos);
  CHECK(t.source.find("partial") != std::string::npos);
  REQUIRE(t.row.has_value());
}

TEST_CASE("verdicts: margin in dB, positive passes, required margin respected", "[evm_limits]") {
  const auto limit = parse_evm_limit("8%");
  const auto v = evm_verdict(4.0, limit);
  CHECK(std::abs(v.margin_db - 20.0 * std::log10(2.0)) <= 1e-12);  // half the limit: 6.02 dB
  CHECK(v.pass);
  CHECK_FALSE(evm_verdict(8.5, limit).pass);
  CHECK(evm_verdict(8.5, limit).margin_db < 0.0);
  CHECK(evm_verdict(8.0, limit).pass);  // exactly at the limit: margin 0
  CHECK_FALSE(evm_verdict(7.0, limit, 2.0).pass);  // 1.16 dB below, 2 dB asked
  CHECK(evm_verdict(6.0, limit, 2.0).pass);        // 2.50 dB below
  CHECK_THROWS_AS(evm_verdict(0.0, limit), ConfigError);
  CHECK_THROWS_AS(evm_verdict(5.0, limit, -1.0), ConfigError);
}

TEST_CASE("docs/evm-limits.md lists every row as generated", "[evm_limits]") {
  std::ifstream in(test::source_path("docs/evm-limits.md"));
  REQUIRE(in.good());
  std::stringstream ss;
  ss << in.rdbuf();
  const std::string doc = ss.str();
  const std::string begin = "<!-- BEGIN generated by evm_limit_tables_markdown() -->\n";
  const std::string end = "<!-- END generated -->";
  const auto a = doc.find(begin), b = doc.find(end);
  REQUIRE(a != std::string::npos);
  REQUIRE(b != std::string::npos);
  const std::string body = doc.substr(a + begin.size(), b - a - begin.size());
  const std::string expected = evm_limit_tables_markdown();
  if (body != expected) {
    std::ofstream("evm-limits-generated.md") << expected;
    FAIL("docs/evm-limits.md is out of date: the current table is in evm-limits-generated.md (working directory)");
  }
  std::size_t rows = 0;
  for (const auto& t : evm_limit_tables()) rows += t.rows.size();
  std::size_t lines = 0;
  for (std::size_t p = body.find("\n| "); p != std::string::npos; p = body.find("\n| ", p + 1)) ++lines;
  CHECK(lines == rows + evm_limit_tables().size());  // each table has one header line
}
