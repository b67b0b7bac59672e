#include "study/tally_codec.hpp"

#include <cstring>
#include <type_traits>

#include "lotwise/error.hpp"
#include "study/plan.hpp"

namespace lotwise::detail {
namespace {

constexpr char kChunksTag[8] = {'L', 'W', 'C', 'H', 'U', 'N', 'K', '2'};
constexpr char kRangesTag[8] = {'L', 'W', 'R', 'A', 'N', 'G', 'E', '1'};
constexpr std::uint32_t kByteOrder = 0x01020304u;

// FNV-1a, 64 bits.
class Digest {
 public:
  void bytes(const void* data, std::size_t n) {
    const auto* p = static_cast<const unsigned char*>(data);
    for (std::size_t i = 0; i < n; ++i) {
      h_ ^= p[i];
      h_ *= 0x100000001b3ull;
    }
  }
  template <typename T>
  void value(T v) {
    static_assert(std::is_trivially_copyable<T>::value, "plain values only");
    bytes(&v, sizeof v);
  }
  void text(const std::string& s) {
    value<std::uint64_t>(s.size());
    bytes(s.data(), s.size());
  }
  std::uint64_t get() const { return h_; }

 private:
  std::uint64_t h_ = 0xcbf29ce484222325ull;
};

class Writer {
 public:
  template <typename T>
  void value(T v) {
    static_assert(std::is_trivially_copyable<T>::value, "plain values only");
    const std::size_t at = out_.size();
    out_.resize(at + sizeof v);
    std::memcpy(&out_[at], &v, sizeof v);
  }
  template <typename T>
  void values(const std::vector<T>& v) {
    value<std::uint64_t>(v.size());
    if (v.empty()) return;
    const std::size_t at = out_.size();
    out_.resize(at + v.size() * sizeof(T));
    std::memcpy(&out_[at], v.data(), v.size() * sizeof(T));
  }
  void stats(const RunningStats& s) { value(s.state()); }
  void tally(const Tally& t) {
    value(t.samples);
    value(t.passed);
    value(t.singular);
    value(t.invalid);
    value(t.saturated);
    values(t.spec_passed);
    values(t.spec_saturated);
    values(t.measurement_saturated);
    value<std::uint64_t>(t.stats.size());
    for (const RunningStats& s : t.stats) stats(s);
  }
  // Sparse: a chunk fills few of a histogram's bins.
  void histogram(const Histogram& h) {
    value<std::uint8_t>(h.has_range());
    if (!h.has_range()) return;
    value(h.low());
    value(h.high());
    value<std::uint64_t>(h.bins());
    value(h.below());
    value(h.above());
    value(h.total());
    std::uint64_t filled = 0;
    for (std::uint64_t c : h.counts()) filled += c != 0;
    value(filled);
    for (std::size_t i = 0; i < h.counts().size(); ++i) {
      if (h.counts()[i] == 0) continue;
      value<std::uint64_t>(i);
      value(h.counts()[i]);
    }
  }
  std::string take() { return std::move(out_); }

 private:
  std::string out_;
};

class Reader {
 public:
  Reader(const std::string& in, const char* what) : in_(in), what_(what) {}
  template <typename T>
  T value() {
    T v;
    need(sizeof v);
    std::memcpy(&v, in_.data() + at_, sizeof v);
    at_ += sizeof v;
    return v;
  }
  template <typename T>
  std::vector<T> values(std::size_t expected) {
    const std::uint64_t n = value<std::uint64_t>();
    if (n != expected) fail("a list has " + std::to_string(n) + " entries, expected " + std::to_string(expected));
    return raw<T>(static_cast<std::size_t>(n));
  }
  template <typename T>
  std::vector<T> values_any() {
    const std::uint64_t n = value<std::uint64_t>();
    if (n > (in_.size() - at_) / sizeof(T)) fail("it ends early (truncated): a list runs past the end");
    return raw<T>(static_cast<std::size_t>(n));
  }
  RunningStats stats() { return RunningStats::from_state(value<RunningStats::State>()); }
  Tally tally(std::size_t measurements, std::size_t specs) {
    Tally t;
    t.samples = value<std::uint64_t>();
    t.passed = value<std::uint64_t>();
    t.singular = value<std::uint64_t>();
    t.invalid = value<std::uint64_t>();
    t.saturated = value<std::uint64_t>();
    t.spec_passed = values<std::uint64_t>(specs);
    t.spec_saturated = values<std::uint64_t>(specs);
    t.measurement_saturated = values<std::uint64_t>(measurements);
    const std::uint64_t n = value<std::uint64_t>();
    if (n != measurements) fail("a tally has " + std::to_string(n) + " measurements, expected " + std::to_string(measurements));
    for (std::size_t m = 0; m < measurements; ++m) t.stats.push_back(stats());
    return t;
  }
  Histogram histogram() {
    if (value<std::uint8_t>() == 0) return Histogram();
    const double low = value<double>();
    const double high = value<double>();
    const std::uint64_t bins = value<std::uint64_t>();
    const std::uint64_t below = value<std::uint64_t>();
    const std::uint64_t above = value<std::uint64_t>();
    const std::uint64_t total = value<std::uint64_t>();
    const std::uint64_t filled = value<std::uint64_t>();
    if (bins == 0 || bins > (std::uint64_t{1} << 32) || filled > bins) fail("a histogram's bins are damaged");
    std::vector<std::uint64_t> counts(static_cast<std::size_t>(bins), 0);
    for (std::uint64_t k = 0; k < filled; ++k) {
      const std::uint64_t i = value<std::uint64_t>();
      if (i >= bins) fail("a histogram bin lies outside its range");
      counts[static_cast<std::size_t>(i)] = value<std::uint64_t>();
    }
    try {
      return Histogram::from_counts(low, high, std::move(counts), below, above, total);
    } catch (const Error& e) {
      fail(e.what());
    }
  }
  void header(const char (&tag)[8], std::uint64_t fingerprint) {
    need(8);
    if (std::memcmp(in_.data(), tag, 8) != 0) fail("it does not start with the lotwise tag");
    at_ = 8;
    if (value<std::uint32_t>() != kByteOrder) fail("it was written on a machine of another byte order");
    if (value<std::uint64_t>() != fingerprint) {
      fail("it belongs to another study or other run options (samples, seed, chunk size, "
           "sampler, replicates, histogram bins, kept samples, attribution, builds per lot)");
    }
  }
  void end() {
    if (at_ != in_.size()) fail("it has " + std::to_string(in_.size() - at_) + " bytes past its end");
  }
  [[noreturn]] void fail(const std::string& why) const {
    throw RunError(std::string("cannot read ") + what_ + ": " + why);
  }

 private:
  template <typename T>
  std::vector<T> raw(std::size_t n) {
    need(n * sizeof(T));
    std::vector<T> v(n);
    if (n > 0) std::memcpy(v.data(), in_.data() + at_, n * sizeof(T));
    at_ += n * sizeof(T);
    return v;
  }
  void need(std::size_t n) const {
    if (in_.size() - at_ < n) fail("it ends early (truncated)");
  }
  const std::string& in_;
  const char* what_;
  std::size_t at_ = 0;
};

void write_header(Writer& w, const char (&tag)[8], std::uint64_t fingerprint) {
  for (char c : tag) w.value(c);
  w.value(kByteOrder);
  w.value(fingerprint);
}

}  // namespace

std::uint64_t run_fingerprint(const Study::Impl& s, const RunOptions& o, const RunShape& shape) {
  Digest d;
  d.value<std::uint32_t>(1);  // format of this digest
  for (const auto& p : s.design.circuit.parameters()) d.text(p.name);
  for (const auto& c : s.model.coordinates()) {
    d.text(c.name);
    d.value<std::uint8_t>(c.normal);
  }
  for (const auto& m : s.design.measurements) d.text(m.name);
  for (const auto& spec : s.design.specs) {
    d.value(spec.min);
    d.value(spec.max);
  }
  for (std::size_t v : shape.varied) d.value<std::uint64_t>(v);
  // The study's response at a fixed point of every coordinate: it changes with any
  // nominal value, spread, law or temperature setting.
  std::vector<double> point(s.model.dimension());
  for (std::size_t i = 0; i < point.size(); ++i) {
    point[i] = s.model.coordinates()[i].normal ? 0.7071 - 0.1 * static_cast<double>(i % 7)
                                               : 0.3183 + 0.05 * static_cast<double>(i % 9);
  }
  BuildScratch build = s.model.make_scratch();
  s.model.prepare(point.data(), build);
  std::vector<double> theta = s.nominal_parameters;
  std::vector<double> values(shape.measurements);
  Evaluator evaluator(s.network, s.plan);
  for (std::size_t q = 0; q < shape.evaluations; ++q) {
    s.model.apply(build, s.model.temperature_of(build, q), theta.data());
    for (double t : theta) d.value(t);
    d.value(static_cast<int>(evaluator.evaluate(theta.data(), values.data())));
    for (double v : values) d.value(v);
  }
  d.value(o.samples);
  d.value(o.seed);
  d.value(o.chunk_size);
  d.value(static_cast<int>(o.sampler));
  d.value(shape.replicates);
  d.value(o.histogram_bins);
  d.value<std::uint8_t>(o.keep_samples);
  d.value<std::uint8_t>(o.attribution);
  d.value(shape.regression_samples);
  d.value(o.builds_per_lot);
  return d.get();
}

std::string encode_chunks(const std::vector<ChunkTally>& chunks, std::uint64_t fingerprint) {
  Writer w;
  write_header(w, kChunksTag, fingerprint);
  w.value<std::uint64_t>(chunks.size());
  for (const ChunkTally& c : chunks) {
    w.value(c.index);
    w.value(c.replicate);
    w.value(c.first_sample);
    w.tally(c.builds);
    w.value<std::uint64_t>(c.temperatures.size());
    for (const Tally& t : c.temperatures) w.tally(t);
    w.value<std::uint64_t>(c.histogram_values.size());
    for (const std::vector<double>& v : c.histogram_values) w.values(v);
    w.values(c.pilot);
    w.values(c.pairs);
    w.value<std::uint64_t>(c.parameter_all.size());
    for (const RunningStats& x : c.parameter_all) w.stats(x);
    for (const RunningStats& x : c.parameter_failing) w.stats(x);
    w.values(c.values);
    w.values(c.parameters);
    w.values(c.pass);
    w.values(c.regression_rows);
    w.value<std::uint64_t>(c.lots.size());
    for (const LotStats& lot : c.lots) {
      w.value(lot.lot);
      for (const RunningStats& x : lot.stats) w.stats(x);
    }
  }
  return w.take();
}

std::vector<ChunkTally> decode_chunks(const std::string& bytes, std::uint64_t fingerprint,
                                      const RunShape& shape) {
  Reader r(bytes, "a piece of a chunked run");
  r.header(kChunksTag, fingerprint);
  const std::uint64_t n = r.value<std::uint64_t>();
  if (n > shape.chunks) r.fail("it claims more chunks than the run has");
  const std::size_t m = shape.measurements;
  const std::size_t a_count = shape.attribution ? shape.varied.size() : 0;
  std::vector<ChunkTally> out;
  for (std::uint64_t k = 0; k < n; ++k) {
    ChunkTally c;
    c.index = r.value<std::uint64_t>();
    c.replicate = r.value<std::uint64_t>();
    c.first_sample = r.value<std::uint64_t>();
    if (c.index >= shape.chunks) r.fail("chunk " + std::to_string(c.index) + " lies outside the run");
    const ChunkLayout::Range range = shape.layout.range(c.index);
    if (c.replicate != range.replicate || c.first_sample != range.first_sample) {
      r.fail("chunk " + std::to_string(c.index) + " does not match the run's layout");
    }
    c.builds = r.tally(m, shape.specs);
    const std::uint64_t sweep = r.value<std::uint64_t>();
    if (sweep != shape.sweep) r.fail("a chunk has the wrong number of temperatures");
    for (std::uint64_t q = 0; q < sweep; ++q) c.temperatures.push_back(r.tally(m, shape.specs));
    const std::uint64_t h = r.value<std::uint64_t>();
    if (h != 0 && h != m) r.fail("a chunk has the wrong number of histograms");
    const std::uint64_t most_values = range.count * std::max<std::size_t>(shape.evaluations, 1);
    for (std::uint64_t i = 0; i < h; ++i) {
      c.histogram_values.push_back(r.values_any<double>());
      if (c.histogram_values.back().size() > most_values) {
        r.fail("a chunk holds more histogram values than it has builds");
      }
    }
    c.pilot = r.values_any<double>();
    c.pairs = r.values<PairMoments>(m * a_count);
    const std::uint64_t a = r.value<std::uint64_t>();
    if (a != a_count) r.fail("a chunk has the wrong number of attributed parameters");
    for (std::size_t i = 0; i < a_count; ++i) c.parameter_all.push_back(r.stats());
    for (std::size_t i = 0; i < a_count; ++i) c.parameter_failing.push_back(r.stats());
    c.values = r.values_any<double>();
    c.parameters = r.values_any<double>();
    c.pass = r.values_any<std::uint8_t>();
    c.regression_rows = r.values_any<double>();
    const std::uint64_t lots = r.value<std::uint64_t>();
    if (lots > shape.layout.chunk + 1) r.fail("a chunk claims more lots than it has builds");
    for (std::uint64_t l = 0; l < lots; ++l) {
      LotStats lot;
      lot.lot = r.value<std::uint64_t>();
      for (std::size_t i = 0; i < m; ++i) lot.stats.push_back(r.stats());
      c.lots.push_back(std::move(lot));
    }
    out.push_back(std::move(c));
  }
  r.end();
  return out;
}

std::string encode_ranges(const std::vector<Histogram>& ranges, std::uint64_t fingerprint) {
  Writer w;
  write_header(w, kRangesTag, fingerprint);
  w.value<std::uint64_t>(ranges.size());
  for (const Histogram& h : ranges) w.histogram(h);
  return w.take();
}

std::vector<Histogram> decode_ranges(const std::string& bytes, std::uint64_t fingerprint,
                                     const RunShape& shape) {
  Reader r(bytes, "the histogram ranges of a chunked run");
  r.header(kRangesTag, fingerprint);
  const std::uint64_t n = r.value<std::uint64_t>();
  if (n != shape.measurements) r.fail("it has ranges for " + std::to_string(n) + " measurements, expected " + std::to_string(shape.measurements));
  std::vector<Histogram> out;
  for (std::uint64_t i = 0; i < n; ++i) {
    out.push_back(r.histogram());
    if (out.back().total() != 0) r.fail("a range holds values");
  }
  r.end();
  return out;
}

}  // namespace lotwise::detail
