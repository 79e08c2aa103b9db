// prbs: ITU-T O.150 pseudo-random binary sequences: generator and self-synchronising checker.
#include "qamsight/prbs.hpp"

#include <array>
#include <cmath>
#include <string>

namespace qamsight {

namespace {

// Table of prbs.hpp. Clause numbers and polarities from memory (ITU-T O.150 (05/96), clause 5).
constexpr std::array<PrbsDefinition, 4> kDefinitions = {{
    {PrbsPolynomial::prbs9, 9, 5, false, "PRBS-9", "x^9 + x^5 + 1"},
    {PrbsPolynomial::prbs15, 15, 14, true, "PRBS-15", "x^15 + x^14 + 1"},
    {PrbsPolynomial::prbs23, 23, 18, true, "PRBS-23", "x^23 + x^18 + 1"},
    {PrbsPolynomial::prbs31, 31, 28, true, "PRBS-31", "x^31 + x^28 + 1"},
}};

constexpr std::uint32_t register_mask(unsigned degree) noexcept {
  return degree >= 32 ? 0xffffffffu : ((std::uint32_t{1} << degree) - 1u);
}

// b[t] = b[t - a] xor b[t - n]; stage j is bit j - 1.
inline std::uint32_t feedback(std::uint32_t s, unsigned a, unsigned n) noexcept {
  return ((s >> (a - 1)) ^ (s >> (n - 1))) & 1u;
}

}  // namespace

const PrbsDefinition& prbs_definition(PrbsPolynomial polynomial) noexcept {
  return kDefinitions[static_cast<std::size_t>(polynomial)];
}

PrbsPolynomial prbs_from_degree(unsigned degree) {
  for (const auto& d : kDefinitions) {
    if (d.degree == degree) return d.polynomial;
  }
  throw ConfigError("prbs", std::to_string(degree), "9, 15, 23 or 31");
}

bool prbs_inverted(PrbsPolynomial polynomial, PrbsPolarity polarity) noexcept {
  switch (polarity) {
    case PrbsPolarity::inverted:
      return true;
    case PrbsPolarity::non_inverted:
      return false;
    case PrbsPolarity::o150:
      break;
  }
  return prbs_definition(polynomial).o150_inverted;
}

std::uint64_t prbs_period(PrbsPolynomial polynomial) noexcept {
  return (std::uint64_t{1} << prbs_definition(polynomial).degree) - 1u;
}

// ---------------------------------------------------------------------------------------------

PrbsGenerator::PrbsGenerator(PrbsPolynomial polynomial, PrbsPolarity polarity, std::uint32_t seed)
    : definition_(&prbs_definition(polynomial)),
      mask_(register_mask(definition_->degree)),
      invert_(prbs_inverted(polynomial, polarity) ? 1 : 0) {
  const std::uint32_t s = seed == 0xffffffffu ? mask_ : seed;
  if (s == 0 || s > mask_) {
    throw ConfigError("prbs seed", std::to_string(seed),
                      "1 to 2^" + std::to_string(definition_->degree) + " - 1 (0xffffffff = all ones)");
  }
  seed_ = state_ = s;
}

std::uint8_t PrbsGenerator::next() noexcept {
  const std::uint32_t b = feedback(state_, definition_->tap, definition_->degree);
  state_ = ((state_ << 1) | b) & mask_;
  return static_cast<std::uint8_t>(b ^ invert_);
}

void PrbsGenerator::fill(std::span<std::uint8_t> bits) noexcept {
  const unsigned a = definition_->tap, n = definition_->degree;
  std::uint32_t s = state_;
  for (auto& out : bits) {
    const std::uint32_t b = feedback(s, a, n);
    s = ((s << 1) | b) & mask_;
    out = static_cast<std::uint8_t>(b ^ invert_);
  }
  state_ = s;
}

// ---------------------------------------------------------------------------------------------

PrbsChecker::PrbsChecker(const PrbsCheckerConfig& config)
    : config_(config),
      definition_(&prbs_definition(config.polynomial)),
      mask_(register_mask(definition_->degree)),
      invert_(prbs_inverted(config.polynomial, config.polarity) ? 1 : 0) {
  if (config.verify_bits > 4096) {
    throw ConfigError("verify_bits", std::to_string(config.verify_bits), "0 to 4096");
  }
  if (config.loss_window_bits < 16 || config.loss_window_bits > (std::size_t{1} << 20)) {
    throw ConfigError("loss_window_bits", std::to_string(config.loss_window_bits), "16 to 1048576");
  }
  if (!(config.loss_error_fraction > 0.0 && config.loss_error_fraction < 1.0)) {
    throw ConfigError("loss_error_fraction", format_number(config.loss_error_fraction), "0 < fraction < 1");
  }
  loss_threshold_ = static_cast<std::uint64_t>(
      std::ceil(config.loss_error_fraction * static_cast<double>(config.loss_window_bits)));
  if (loss_threshold_ < 1) loss_threshold_ = 1;
}

void PrbsChecker::reset() noexcept {
  state_ = State::hunting;
  recent_ = register_ = 0;
  loaded_ = verified_ = 0;
  window_bits_ = window_errors_ = 0;
  previous_bits_ = previous_errors_ = 0;
  counts_ = PrbsCounts{};
}

std::uint8_t PrbsChecker::predict() const noexcept {
  return static_cast<std::uint8_t>(feedback(register_, definition_->tap, definition_->degree));
}

void PrbsChecker::process(std::span<const std::uint8_t> bits, std::span<std::uint8_t> expected) noexcept {
  QAMSIGHT_ASSERT(expected.empty() || expected.size() == bits.size(), "expected must match bits");
  const std::size_t n = definition_->degree;
  const std::uint64_t window = config_.loss_window_bits;
  const std::size_t verify = config_.verify_bits;

  auto lock = [&](std::uint64_t index) {
    state_ = State::locked;
    counts_.bits += verify;
    if (counts_.acquisitions == 0) counts_.first_lock_bit = index + 1 - verify;
    ++counts_.acquisitions;
    window_bits_ = verify;
    window_errors_ = 0;
    previous_bits_ = previous_errors_ = 0;
  };
  // Starts verifying from the latest n received bits (or keeps hunting for a zero register).
  auto start_verifying = [&](std::uint64_t index) {
    if (loaded_ < n || recent_ == 0) {
      state_ = State::hunting;
      return;
    }
    register_ = recent_;
    verified_ = 0;
    state_ = State::verifying;
    if (verify == 0) lock(index);
  };

  for (std::size_t i = 0; i < bits.size(); ++i) {
    const std::uint64_t index = counts_.received++;
    const std::uint32_t u = (bits[i] != 0 ? 1u : 0u) ^ invert_;  // the un-inverted sequence bit
    recent_ = ((recent_ << 1) | u) & mask_;
    if (loaded_ < n) ++loaded_;
    std::uint8_t prediction = 2;
    switch (state_) {
      case State::hunting:
        start_verifying(index);
        break;
      case State::verifying: {
        const std::uint8_t p = predict();
        prediction = static_cast<std::uint8_t>(p ^ invert_);
        if (u == p) {
          register_ = ((register_ << 1) | p) & mask_;
          if (++verified_ >= verify) lock(index);
        } else {
          start_verifying(index);  // recent_ already holds this bit: try again from here
        }
        break;
      }
      case State::locked: {
        const std::uint8_t p = predict();
        prediction = static_cast<std::uint8_t>(p ^ invert_);
        register_ = ((register_ << 1) | p) & mask_;
        ++counts_.bits;
        ++window_bits_;
        if (u != p) {
          ++counts_.errors;
          ++window_errors_;
        }
        if (window_errors_ >= loss_threshold_ || window_bits_ >= window) {
          if (window_errors_ >= loss_threshold_) {
            // Lost: this window and the one before straddle the slip, so their bits are not counted.
            counts_.bits -= window_bits_ + previous_bits_;
            counts_.errors -= window_errors_ + previous_errors_;
            counts_.discarded_bits += window_bits_ + previous_bits_;
            ++counts_.sync_losses;
            state_ = State::hunting;
            loaded_ = 0;  // hunt on bits received after the loss
            recent_ = 0;
            previous_bits_ = previous_errors_ = 0;
          } else {
            previous_bits_ = window_bits_;
            previous_errors_ = window_errors_;
          }
          window_bits_ = window_errors_ = 0;
        }
        break;
      }
    }
    if (!expected.empty()) expected[i] = prediction;
  }
}

}  // namespace qamsight
