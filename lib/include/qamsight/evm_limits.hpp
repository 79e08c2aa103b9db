// evm_limits: EVM limits of open standards (with provenance flags), user limits, pass/fail margins.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"

// Every built-in row carries its source (document, table, edition or release) and how sure the
// value is, exactly as the project's reference notes give it:
//   confirmed:   read in the cited source;
//   partial:     part of it was read (for example in a secondary source quoting the table);
//   from_memory: recalled, not read in the source; confirm it in the document before using it
//                as a hard pass/fail limit.
// Limits compare with the RMS EVM normalised to the average constellation power (the 3GPP and
// IEEE 802.11 normalisation), not with peak-normalised values. docs/evm-limits.md lists every row.
namespace qamsight {

enum class LimitProvenance { confirmed, partial, from_memory };

/// "confirmed", "partial", "from memory".
std::string_view provenance_name(LimitProvenance p) noexcept;

/// One limit of a standard's table.
struct EvmLimitRow {
  std::string modulation;  ///< constellation name as Constellation::from_name spells it ("16qam")
  std::string code_rate;   ///< "1/2", "3/4", ... where the standard distinguishes rates; else empty
  double limit_pct = 0.0;  ///< RMS EVM limit, %
  double limit_db = 0.0;   ///< the same in dB, 20 log10(pct / 100)
  bool stated_in_db = false;  ///< the standard states the value in dB (IEEE) rather than % (3GPP)
  std::string document;    ///< e.g. "3GPP TS 38.104"
  std::string table;       ///< e.g. "Table 6.5.2.2-1"
  std::string edition;     ///< edition or release the value belongs to, as far as known
  LimitProvenance provenance = LimitProvenance::from_memory;
  std::string note;        ///< what is and is not confirmed
};

/// A named set of rows (one standard, one device class or PHY).
struct EvmLimitTable {
  std::string name;   ///< command-line name, e.g. "3gpp-nr-bs"
  std::string title;  ///< e.g. "3GPP NR base station (BS type 1-C / 1-H), TS 38.104"
  bool has_rates = false;  ///< rows differ by code rate (a rate must be given to pick one)
  std::string measurement;  ///< how the standard measures (averaging, equalisation), in brief
  std::vector<EvmLimitRow> rows;

  /// The row for a modulation (and rate, for tables with rates; "0.75" and "3/4" are the
  /// same). Throws ConfigError naming "modulation" or "rate" and listing what exists.
  const EvmLimitRow& row(std::string_view modulation, std::string_view rate = {}) const;
};

/// The built-in tables: 3gpp-nr-bs, 3gpp-lte-bs, ieee-802.11-ofdm, ieee-802.11-ht,
/// ieee-802.11-vht, ieee-802.11-he, ieee-802.11-eht.
const std::vector<EvmLimitTable>& evm_limit_tables();
/// A table by name; throws ConfigError("limit table", name, the names) otherwise.
const EvmLimitTable& evm_limit_table(std::string_view name);

/// A limit to check against: user-given or from a table.
struct EvmLimit {
  double pct = 0.0;
  double db = 0.0;
  std::string source;  ///< "user limit 8%" or "3GPP TS 38.104 Table 6.5.2.2-1 (...), 64QAM"
  std::optional<EvmLimitRow> row;  ///< the table row, when it came from a table
};

/// Parses a user limit: a number followed by "%" (0 < x <= 100) or by "dB" (x <= 0), spaces
/// allowed between them ("8%", "8 %", "-22dB", "-22 dB"). Throws ConfigError("limit", text, ...)
/// for anything else.
EvmLimit parse_evm_limit(std::string_view text);
/// The limit of a table row.
EvmLimit evm_limit_from_table(std::string_view table, std::string_view modulation, std::string_view rate = {});

/// Measured (or predicted) RMS EVM against a limit.
struct EvmVerdict {
  double measured_pct = 0.0;
  double measured_db = 0.0;
  double limit_pct = 0.0;
  double limit_db = 0.0;
  double margin_db = 0.0;           ///< limit_db - measured_db: positive = below the limit
  double required_margin_db = 0.0;  ///< margin asked for
  bool pass = false;                ///< margin_db >= required_margin_db
};

/// Throws ConfigError unless measured_pct > 0 is finite and required_margin_db is in [0, 60].
EvmVerdict evm_verdict(double measured_pct, const EvmLimit& limit, double required_margin_db = 0.0);

/// The tables as Markdown (one section per table, one line per row with its flag): the body of
/// docs/evm-limits.md between its "generated" markers.
std::string evm_limit_tables_markdown();

}  // namespace qamsight
