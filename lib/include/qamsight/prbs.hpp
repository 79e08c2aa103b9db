// prbs: ITU-T O.150 pseudo-random binary test sequences, generator and self-synchronising checker.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string_view>

#include "qamsight/core.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// The sequences (ITU-T Recommendation O.150 (05/96), clause 5; the clause numbers and the
// inversion flags below are from memory, not read in the document):
//
//   name     polynomial         feedback taps   O.150 output   O.150 clause
//   PRBS-9   x^9  + x^5  + 1    stages 5, 9     not inverted   5.1
//   PRBS-15  x^15 + x^14 + 1    stages 14, 15   inverted       5.3
//   PRBS-23  x^23 + x^18 + 1    stages 18, 23   inverted       5.6
//   PRBS-31  x^31 + x^28 + 1    stages 28, 31   inverted       5.8
//
// Register convention (O.150's description of the generator: an n-stage shift register whose
// stage a and stage n outputs are added modulo 2 and fed back to the input of stage 1): with
// b[t] the bit entering stage 1 at step t, stage j holds b[t - j], so
//   b[t] = b[t - a] xor b[t - n],
// and the output bit of step t is b[t] (xor 1 for an inverted sequence). The seed is the
// register content b[-1] ... b[-n]; bit j - 1 of the seed word is stage j (b[-j]). The
// all-ones seed is the usual start and the library's default. Any non-zero seed gives the
// same sequence (the register runs through all 2^n - 1 non-zero states), shifted.
// The "inverted" output makes the longest run of zeros n long (n - 1 without inversion).
// ---------------------------------------------------------------------------------------------

enum class PrbsPolynomial { prbs9, prbs15, prbs23, prbs31 };

/// Whether the output is inverted: as O.150 specifies for the polynomial, or forced.
enum class PrbsPolarity { o150, non_inverted, inverted };

struct PrbsDefinition {
  PrbsPolynomial polynomial;
  unsigned degree;         ///< n: register length, period 2^n - 1
  unsigned tap;            ///< a: the middle feedback stage
  bool o150_inverted;      ///< O.150's polarity for this polynomial (from memory)
  std::string_view name;   ///< "PRBS-9", ...
  std::string_view polynomial_text;  ///< "x^9 + x^5 + 1", ...
};

/// The definition of a polynomial (table above).
const PrbsDefinition& prbs_definition(PrbsPolynomial polynomial) noexcept;
/// The polynomial of degree 9, 15, 23 or 31; throws ConfigError("prbs", ...) otherwise.
PrbsPolynomial prbs_from_degree(unsigned degree);
/// Resolves the polarity to inverted or not.
bool prbs_inverted(PrbsPolynomial polynomial, PrbsPolarity polarity) noexcept;
/// 2^n - 1.
std::uint64_t prbs_period(PrbsPolynomial polynomial) noexcept;

/// Generator of one sequence, bits one per byte (0 or 1). Cheap; one thread per instance.
class PrbsGenerator {
 public:
  /// seed: register content (bit j-1 = stage j), non-zero and below 2^n; throws ConfigError.
  explicit PrbsGenerator(PrbsPolynomial polynomial, PrbsPolarity polarity = PrbsPolarity::o150,
                         std::uint32_t seed = 0xffffffffu);

  const PrbsDefinition& definition() const noexcept { return *definition_; }
  bool inverted() const noexcept { return invert_ != 0; }
  /// Next output bit.
  std::uint8_t next() noexcept;
  /// Fills with the next output bits.
  void fill(std::span<std::uint8_t> bits) noexcept;
  /// Register content (bit j-1 = stage j), the state that produces the next bit.
  std::uint32_t state() const noexcept { return state_; }
  void reset() noexcept { state_ = seed_; }

 private:
  const PrbsDefinition* definition_;
  std::uint32_t mask_;
  std::uint32_t seed_, state_;
  std::uint8_t invert_;
};

/// Settings of a PrbsChecker. The defaults are common practice (no standard sets them).
struct PrbsCheckerConfig {
  PrbsPolynomial polynomial = PrbsPolynomial::prbs15;
  PrbsPolarity polarity = PrbsPolarity::o150;
  /// Correct predictions, after the n loaded bits, that confirm a lock; 0 to 4096. A random
  /// stream passes with probability 2^-verify_bits per attempt (32: 2.3e-10).
  std::size_t verify_bits = 32;
  /// Sync-loss detection: errors counted in consecutive windows of this many bits; 16 to 2^20.
  std::size_t loss_window_bits = 1024;
  /// A window with at least this fraction of bit errors means sync is lost; (0, 1). A stream
  /// that has slipped or is unrelated shows 1/2; 0.35 of 1024 bits lies 9.6 sigma below that
  /// and 12 sigma above a true BER of 0.2.
  double loss_error_fraction = 0.35;
};

/// What a checker has counted.
struct PrbsCounts {
  std::uint64_t bits = 0;         ///< bits compared while in sync
  std::uint64_t errors = 0;       ///< of those, bits that differ from the sequence
  std::uint64_t received = 0;     ///< all bits handed to the checker
  std::uint64_t acquisitions = 0; ///< locks gained (1 for a clean stream)
  std::uint64_t sync_losses = 0;  ///< locks lost
  /// Bits of the windows around a loss: removed from bits/errors (they straddle the slip).
  std::uint64_t discarded_bits = 0;
  std::uint64_t first_lock_bit = 0;  ///< index of the first counted bit of the first lock
  double ber() const noexcept {
    return bits ? static_cast<double>(errors) / static_cast<double>(bits) : std::nan("");
  }
};

/// Self-synchronising PRBS checker: locks onto a received bit stream without knowing where the
/// sequence starts, then counts bit errors against its own free-running copy of the sequence.
///
/// States. Hunting: the last n received bits (un-inverted) are loaded as the register. Then
/// verifying: the register predicts each next bit; a mismatch reloads the register from the
/// latest n received bits and verifying starts again, so the checker re-tries at every bit.
/// After verify_bits correct predictions it is locked, and those bits count as compared
/// (without errors). An all-zero register (a stuck stream) is never accepted. So a clean stream
/// locks at bit n + verify_bits and every bit from index n on is compared.
/// Locked: the register runs on its own (received errors do not enter it, so each error
/// counts once; a feedback checker would count each error three times); each received bit is
/// compared with the prediction. Errors are tallied in windows of loss_window_bits; a window
/// reaching loss_error_fraction errors ends the lock, and its bits and those of the window before
/// it (where the slip may have begun) are discarded from the counts; hunting resumes with the
/// next bit. So the counts always include the two latest windows provisionally.
///
/// process() allocates nothing and never throws. One thread per instance.
class PrbsChecker {
 public:
  explicit PrbsChecker(const PrbsCheckerConfig& config);

  const PrbsCheckerConfig& config() const noexcept { return config_; }
  /// bits: one per byte; any non-zero byte is a 1. `expected`, if not empty (same length),
  /// receives for each bit the checker's prediction (0 or 1) while verifying or locked, and
  /// 2 while it had none (hunting); after a lock is lost, bits of the discarded window keep
  /// the predictions they were given.
  void process(std::span<const std::uint8_t> bits, std::span<std::uint8_t> expected = {}) noexcept;
  bool locked() const noexcept { return state_ == State::locked; }
  const PrbsCounts& counts() const noexcept { return counts_; }
  void reset() noexcept;

 private:
  enum class State { hunting, verifying, locked };
  std::uint8_t predict() const noexcept;

  PrbsCheckerConfig config_;
  const PrbsDefinition* definition_;
  std::uint32_t mask_;
  std::uint8_t invert_;
  std::uint64_t loss_threshold_;
  State state_ = State::hunting;
  std::uint32_t recent_ = 0;       // last n received bits, un-inverted, as a register
  std::uint32_t register_ = 0;     // local generator
  std::size_t loaded_ = 0;         // received bits in recent_ (saturates at n)
  std::size_t verified_ = 0;
  std::uint64_t window_bits_ = 0, window_errors_ = 0;
  std::uint64_t previous_bits_ = 0, previous_errors_ = 0;  // the window before, still provisional
  PrbsCounts counts_;
};

}  // namespace qamsight
