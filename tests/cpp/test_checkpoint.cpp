// Tests of the checkpoint module: format checks, torn tails, mismatches, and resumed sweeps that
// match an uninterrupted run bit for bit.
#include <unistd.h>

#include <bit>
#include <catch2/catch.hpp>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>

#include "qamsight/checkpoint.hpp"
#include "qamsight/io.hpp"

using namespace qamsight;

namespace {

std::string temp_path(const std::string& name) {
  const auto dir = std::filesystem::temp_directory_path() / ("qamsight-ckpt-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const auto p = dir / name;
  std::filesystem::remove(p);
  return p.string();
}

std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void spit(const std::string& path, const std::string& text) {
  std::ofstream(path, std::ios::binary | std::ios::trunc) << text;
}

SweepConfig small_sweep() {
  SweepConfig c;
  c.modulations = {"qpsk", "16qam"};
  c.snr_db = {3.0, 7.0};
  c.stop.min_bit_errors = 3000;
  c.stop.max_bits = 4'000'000;
  c.link.frame_symbols = 256;
  c.seed = 41;
  c.threads = 2;
  return c;
}

// Thrown from on_batch to stop a sweep the hard way, as a kill would (nothing after it runs).
struct Killed : std::runtime_error {
  Killed() : std::runtime_error("killed") {}
};

void require_identical(const SweepResult& a, const SweepResult& b) {
  REQUIRE(a.points.size() == b.points.size());
  for (std::size_t i = 0; i < a.points.size(); ++i) {
    const auto &x = a.points[i], &y = b.points[i];
    CHECK(x.counts.bits == y.counts.bits);
    CHECK(x.counts.bit_errors == y.counts.bit_errors);
    CHECK(x.counts.symbols == y.counts.symbols);
    CHECK(x.counts.symbol_errors == y.counts.symbol_errors);
    CHECK(x.counts.frames == y.counts.frames);
    CHECK(x.counts.frame_errors == y.counts.frame_errors);
    // EVM sums are stored exactly, so even the doubles agree bit for bit.
    CHECK(std::bit_cast<std::uint64_t>(x.evm.error_power) == std::bit_cast<std::uint64_t>(y.evm.error_power));
    CHECK(std::bit_cast<std::uint64_t>(x.evm.reference_power) ==
          std::bit_cast<std::uint64_t>(y.evm.reference_power));
    CHECK(x.evm.peak_error_power == y.evm.peak_error_power);
    CHECK(x.stop_reason == y.stop_reason);
  }
}

}  // namespace

TEST_CASE("checkpoint: fingerprint is FNV-1a 64", "[checkpoint]") {
  // Test vectors of the FNV reference suite (Fowler, Noll, Vo), confirmed with an independent
  // Python implementation of FNV-1a 64 (offset basis 0xcbf29ce484222325, prime 0x100000001b3).
  CHECK(checkpoint_fingerprint("") == 0xcbf29ce484222325ull);
  CHECK(checkpoint_fingerprint("a") == 0xaf63dc4c8601ec8cull);
  CHECK(checkpoint_fingerprint("foobar") == 0x85944171f73967e8ull);
}

TEST_CASE("checkpoint: settings cover what determines the counts, not the threads", "[checkpoint]") {
  SweepConfig a = small_sweep(), b = small_sweep();
  b.threads = 7;
  CHECK(checkpoint_settings(a) == checkpoint_settings(b));
  b.stop.min_bit_errors = 10;
  CHECK(checkpoint_settings(a) != checkpoint_settings(b));
  b = small_sweep();
  b.link.impl_loss_db = 0.25;
  CHECK(checkpoint_settings(a) != checkpoint_settings(b));
  b = small_sweep();
  b.snr_db = {3.0, 7.5};
  CHECK(checkpoint_settings(a) != checkpoint_settings(b));
}

TEST_CASE("checkpoint: sweeps killed after k batches resume to the uninterrupted counts", "[checkpoint]") {
  const SweepConfig config = small_sweep();
  const SweepResult reference = run_sweep(config);
  REQUIRE(reference.complete);
  for (int kill_after : {1, 5, 17, 40}) {
    const std::string path = temp_path("kill.ckpt");
    int batches = 0;
    bool killed = false;
    {
      SweepCheckpoint ck = SweepCheckpoint::start(path, config);
      SweepHooks hooks;
      ck.attach(hooks);
      auto record = hooks.on_batch;
      hooks.on_batch = [&](std::size_t p, const PointSpec& s, const PointState& st) {
        record(p, s, st);
        if (++batches == kill_after) throw Killed();
      };
      try {
        (void)run_sweep(config, hooks);
      } catch (const Killed&) {
        killed = true;
      }
    }
    REQUIRE(killed);
    SweepCheckpoint ck = SweepCheckpoint::resume(path, config);
    CHECK_FALSE(ck.dropped_torn_record());
    SweepHooks hooks;
    ck.attach(hooks);
    SweepConfig two = config;
    two.threads = 1;  // another thread count: still the same counts
    const SweepResult resumed = run_sweep(two, hooks);
    REQUIRE(resumed.complete);
    require_identical(reference, resumed);
  }
}

TEST_CASE("checkpoint: torn last record is dropped, damage elsewhere is an InputError", "[checkpoint]") {
  SweepConfig config = small_sweep();
  config.stop.max_bits = 20'000;
  const std::string path = temp_path("torn.ckpt");
  {
    SweepCheckpoint ck = SweepCheckpoint::start(path, config);
    SweepHooks hooks;
    ck.attach(hooks);
    (void)run_sweep(config, hooks);
  }
  const std::string whole = slurp(path);
  const CheckpointContents c = parse_checkpoint(whole, path);
  CHECK_FALSE(c.torn_tail);
  CHECK(c.points == 4);
  CHECK(c.valid_bytes == whole.size());
  for (std::size_t p = 0; p < 4; ++p) CHECK(c.states[p].done);

  // Every cut inside the last line is a torn tail; the record before it counts.
  const std::size_t last_start = whole.rfind('\n', whole.size() - 2) + 1;
  for (std::size_t cut = last_start + 1; cut < whole.size(); cut += 7) {
    const CheckpointContents t = parse_checkpoint(std::string_view(whole).substr(0, cut), path);
    CHECK(t.torn_tail);
    CHECK(t.valid_bytes == last_start);
    CHECK_FALSE(t.states[3].done);
  }
  // A damaged record in the middle is not a torn tail.
  std::string damaged = whole;
  const std::size_t second = whole.find('\n') + 1;
  damaged[second + 20] ^= 0x01;
  CHECK_THROWS_WITH(parse_checkpoint(damaged, path), Catch::Contains("line 2") && Catch::Contains("damaged"));
  CHECK_THROWS_WITH(parse_checkpoint("", path), Catch::Contains("empty"));
  CHECK_THROWS_WITH(parse_checkpoint("garbage\n", path), Catch::Contains("not a qamsight checkpoint"));

  // resume() rewrites the file compactly without the torn tail.
  spit(path, whole.substr(0, whole.size() - 5));
  {
    SweepCheckpoint ck = SweepCheckpoint::resume(path, config);
    CHECK(ck.dropped_torn_record());
    CHECK(ck.points_done() == 3);
  }
  CHECK_FALSE(parse_checkpoint(slurp(path), path).torn_tail);
}

TEST_CASE("checkpoint: a mismatching sweep and an existing file are InputErrors", "[checkpoint]") {
  SweepConfig config = small_sweep();
  config.stop.max_bits = 20'000;
  const std::string path = temp_path("mismatch.ckpt");
  { (void)SweepCheckpoint::start(path, config); }
  CHECK_THROWS_WITH(SweepCheckpoint::start(path, config), Catch::Contains("already exists"));
  SweepConfig other = config;
  other.seed = 42;
  CHECK_THROWS_WITH(SweepCheckpoint::resume(path, other),
                    Catch::Contains(path) && Catch::Contains("seed is 41 in the checkpoint and 42 now"));
  other = config;
  other.modulations = {"qpsk", "64qam"};
  CHECK_THROWS_WITH(SweepCheckpoint::resume(path, other), Catch::Contains("modulations"));
  // Editing the header's settings breaks its fingerprint.
  std::string text = slurp(path);
  const auto at = text.find("\"seed\":41");
  REQUIRE(at != std::string::npos);
  text.replace(at, 9, "\"seed\":42");
  CHECK_THROWS_WITH(parse_checkpoint(text, path), Catch::Contains("line 1"));
}

TEST_CASE("checkpoint: one writer at a time", "[checkpoint]") {
  const SweepConfig config = small_sweep();
  const std::string path = temp_path("lock.ckpt");
  SweepCheckpoint first = SweepCheckpoint::start(path, config);
  CHECK_THROWS_WITH(SweepCheckpoint::resume(path, config), Catch::Contains("in use"));
}
