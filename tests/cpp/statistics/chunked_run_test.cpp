// A run cut into pieces evaluated "elsewhere" (here: in shuffled order, in pieces of
// uneven size) and merged by ChunkedRun gives the same answer, bit for bit, as
// Study::run; pieces of another run are refused with a message that says so.
#include <algorithm>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "engine/engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

void require_same(const std::vector<double>& a, const std::vector<double>& b) {
  REQUIRE(a.size() == b.size());
  for (std::size_t i = 0; i < a.size(); ++i) {
    INFO("index " << i << ": " << a[i] << " vs " << b[i]);
    CHECK(same_bits(a[i], b[i]));
  }
}

void require_same(const RunningStats& a, const RunningStats& b) {
  CHECK(a.count() == b.count());
  CHECK(a.non_finite() == b.non_finite());
  CHECK(same_bits(a.mean(), b.mean()));
  CHECK(same_bits(a.std_dev(), b.std_dev()));
  CHECK(same_bits(a.min(), b.min()));
  CHECK(same_bits(a.max(), b.max()));
}

void require_same(const YieldResult& a, const YieldResult& b) {
  CHECK(a.samples == b.samples);
  CHECK(a.passed == b.passed);
  CHECK(a.complete == b.complete);
  CHECK(a.target_met == b.target_met);
  CHECK(a.singular == b.singular);
  CHECK(a.saturated == b.saturated);
  CHECK(same_bits(a.interval.low, b.interval.low));
  CHECK(same_bits(a.interval.high, b.interval.high));
  CHECK(same_bits(a.yield_standard_error, b.yield_standard_error));
  REQUIRE(a.measurements.size() == b.measurements.size());
  for (std::size_t m = 0; m < a.measurements.size(); ++m) {
    require_same(a.measurements[m].stats, b.measurements[m].stats);
    CHECK(a.measurements[m].histogram.counts() == b.measurements[m].histogram.counts());
    CHECK(same_bits(a.measurements[m].coverage.low, b.measurements[m].coverage.low));
    CHECK(same_bits(a.measurements[m].coverage.high, b.measurements[m].coverage.high));
  }
  REQUIRE(a.specs.size() == b.specs.size());
  for (std::size_t j = 0; j < a.specs.size(); ++j) CHECK(a.specs[j].passed == b.specs[j].passed);
  require_same(a.correlations, b.correlations);
  require_same(a.failure_shift, b.failure_shift);
  require_same(a.standardized_regression, b.standardized_regression);
  require_same(a.rank_correlations, b.rank_correlations);
  require_same(a.values, b.values);
  require_same(a.parameter_values, b.parameter_values);
  CHECK(a.pass == b.pass);
  REQUIRE(a.temperatures.size() == b.temperatures.size());
  for (std::size_t q = 0; q < a.temperatures.size(); ++q) {
    CHECK(a.temperatures[q].passed == b.temperatures[q].passed);
    for (std::size_t m = 0; m < a.measurements.size(); ++m) {
      require_same(a.temperatures[q].measurements[m].stats, b.temperatures[q].measurements[m].stats);
    }
  }
}

// Chunk 0 first (it sets the ranges), then the rest in pieces of 1 to 5 chunks added in
// a shuffled order, as a cluster's workers would return them.
YieldResult run_in_pieces(const Study& study, const RunOptions& options, unsigned shuffle_seed) {
  ChunkedRun run(study, options);
  run.add(evaluate_chunks(study, options, 0, 1, ""));
  REQUIRE(run.ready());
  const std::string ranges = run.ranges();
  std::vector<std::string> pieces;
  std::mt19937 engine(shuffle_seed);
  for (std::uint64_t first = 1; first < run.chunks();) {
    const std::uint64_t count = std::min<std::uint64_t>(1 + engine() % 5, run.chunks() - first);
    pieces.push_back(evaluate_chunks(study, options, first, count, ranges));
    first += count;
  }
  std::shuffle(pieces.begin(), pieces.end(), engine);
  for (const std::string& p : pieces) run.add(p);
  CHECK(run.finished());
  return run.result();
}

RunOptions options_for(std::uint64_t samples) {
  RunOptions o;
  o.samples = samples;
  o.seed = 4242;
  o.chunk_size = 256;
  o.threads = 2;
  o.keep_samples = true;
  return o;
}

}  // namespace

TEST_CASE("a chunked run equals the threaded run bit for bit", "[chunked]") {
  const Study study(load_design(data_path("diff_amp.toml")));
  const RunOptions o = options_for(5000);
  const YieldResult local = study.run(o);
  require_same(local, run_in_pieces(study, o, 1));
  require_same(local, run_in_pieces(study, o, 2));
}

TEST_CASE("a chunked run with Sobol replicates and a temperature sweep", "[chunked]") {
  const Study study(load_design(std::string(LOTWISE_EXAMPLES_DIR) + "/bridge_stage_discrete.toml"));
  RunOptions o = options_for(3000);
  o.sampler = Sampler::sobol;
  o.replicates = 4;
  require_same(study.run(o), run_in_pieces(study, o, 3));
}

TEST_CASE("a chunked run with lots that straddle the pieces", "[chunked][lots]") {
  Design d = load_design(data_path("diff_amp.toml"));
  d.variations.at(0).lot_tolerance = 0.005;  // the resistors of a build share a reel
  const Study study(std::move(d));
  RunOptions o = options_for(4000);
  o.builds_per_lot = 300;  // lots cross chunk and piece boundaries
  const YieldResult local = study.run(o);
  const YieldResult pieces = run_in_pieces(study, o, 5);
  require_same(local, pieces);
  for (std::size_t j = 0; j < local.specs.size(); ++j) {
    CHECK(same_bits(local.specs[j].within_lot_capability.cpk, pieces.specs[j].within_lot_capability.cpk));
  }
  for (std::size_t m = 0; m < local.measurements.size(); ++m) {
    CHECK(same_bits(local.measurements[m].within_lot_std_dev, pieces.measurements[m].within_lot_std_dev));
  }
}

TEST_CASE("a chunked adaptive run stops at the same chunk as the local run", "[chunked]") {
  const Study study(load_design(data_path("diff_amp.toml")));
  RunOptions o = options_for(200000);
  o.keep_samples = false;
  o.target_half_width = 0.01;
  const YieldResult local = study.run(o);
  REQUIRE(local.target_met);
  REQUIRE(local.samples < o.samples);
  const YieldResult pieces = run_in_pieces(study, o, 4);
  require_same(local, pieces);
}

TEST_CASE("a chunked run refuses pieces of another run", "[chunked][errors]") {
  const Study study(load_design(data_path("diff_amp.toml")));
  const RunOptions o = options_for(2000);
  ChunkedRun run(study, o);
  CHECK_THROWS_WITH(run.ranges(), Catch::Contains("add its piece first"));
  RunOptions other = o;
  other.seed = 1;
  CHECK_THROWS_WITH(run.add(evaluate_chunks(study, other, 0, 1, "")),
                    Catch::Contains("another study or other run options"));
  const std::string first = evaluate_chunks(study, o, 0, 1, "");
  CHECK_THROWS_WITH(run.add(first.substr(0, first.size() / 2)), Catch::Contains("truncated"));
  CHECK_THROWS_WITH(run.add("not a piece"), Catch::Contains("does not start with the lotwise tag"));
  run.add(first);
  CHECK_THROWS_WITH(run.add(first), Catch::Contains("chunk 0 was added twice"));
  CHECK_THROWS_WITH(evaluate_chunks(study, o, 1, 2, ""),
                    Catch::Contains("need the histogram ranges"));
  CHECK_THROWS_WITH(evaluate_chunks(study, o, 5, 100, run.ranges()),
                    Catch::Contains("outside the run's 8 chunks"));
  const Study changed(load_design(std::string(LOTWISE_EXAMPLES_DIR) + "/load_cell_amp_1pct.toml"));
  CHECK_THROWS_WITH(evaluate_chunks(changed, o, 1, 1, run.ranges()),
                    Catch::Contains("another study or other run options"));
  // A stopped-early merge reports what it has, marked incomplete.
  run.add(evaluate_chunks(study, o, 2, 3, run.ranges()));
  const YieldResult partial = run.result();
  CHECK_FALSE(partial.complete);
  CHECK(partial.samples == 256);  // chunks 2-4 wait for chunk 1
}

TEST_CASE("a chunked run refuses a chunk with more histogram values than builds",
          "[chunked][errors]") {
  const Study study(load_design(data_path("diff_amp.toml")));
  const RunOptions o = options_for(2000);
  ChunkedRun run(study, o);
  run.add(evaluate_chunks(study, o, 0, 1, ""));
  std::string piece = evaluate_chunks(study, o, 1, 1, run.ranges());
  // The piece's histogram values: the measurement count (2), then per measurement a count
  // of values (all 256 builds entered) and the values. Found by that layout, the first
  // count is raised by one and one more value put in.
  auto u64 = [](std::uint64_t v) { return std::string(reinterpret_cast<const char*>(&v), 8); };
  const std::string pattern = u64(2) + u64(256);
  std::size_t at = std::string::npos, found = 0;
  for (std::size_t p = piece.find(pattern); p != std::string::npos;
       p = piece.find(pattern, p + 1)) {
    if (piece.compare(p + 16 + 256 * 8, 8, u64(256)) == 0) {
      at = p;
      ++found;
    }
  }
  REQUIRE(found == 1);
  std::string damaged = piece;
  damaged.replace(at + 8, 8, u64(257));
  damaged.insert(at + 16, u64(0));
  CHECK_THROWS_WITH(run.add(damaged), Catch::Contains("more histogram values than it has builds"));
  run.add(piece);  // the undamaged piece is still taken
  CHECK(run.merged() == 2);
}

namespace {

// Kept samples send every block through the chunk's general loop; without them a block
// whose builds all solved with every value entered takes the measurement-by-measurement
// tally. Both must give the same bits.
void require_block_tallies_agree(const Study& study, RunOptions o) {
  o.keep_samples = true;
  YieldResult general = study.run(o);
  o.keep_samples = false;
  const YieldResult blocks = study.run(o);
  general.values.clear();
  general.parameter_values.clear();
  general.pass.clear();
  require_same(general, blocks);
}

}  // namespace

TEST_CASE("blocks with every value entered are tallied as the general loop tallies them",
          "[chunked][fast]") {
  RunOptions o = options_for(20000);
  o.regression_samples = 3000;  // later blocks are past the regression rows
  SECTION("every block plain after the pilot and regression rows") {
    require_block_tallies_agree(Study(load_design(data_path("diff_amp.toml"))), o);
  }
  SECTION("plain blocks between ones with saturated builds") {
    const Study saturating(load_design(data_path("railed_diff_amp.toml")));
    const YieldResult r = saturating.run(o);
    CHECK(r.saturated > r.samples / 40);  // enough blocks with a saturated build
    CHECK(r.saturated < r.samples / 4);   // and enough without
    require_block_tallies_agree(saturating, o);
  }
}
