// The per-sample path of the variation model allocates nothing: global operator new and,
// on glibc, malloc itself are replaced by counting versions, and every sampler fills and
// maps points of a model with every kind of structure.
#include <atomic>
#include <cmath>
#include <cstddef>
#include <cstdlib>
#include <new>
#include <vector>

#include "variation_support.hpp"

namespace {
std::atomic<std::size_t> new_calls{0};
std::atomic<std::size_t> malloc_calls{0};
}  // namespace

void* operator new(std::size_t size) {
  ++new_calls;
  if (void* p = std::malloc(size ? size : 1)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t size) { return operator new(size); }
void* operator new(std::size_t size, const std::nothrow_t&) noexcept {
  ++new_calls;
  return std::malloc(size ? size : 1);
}
void* operator new[](std::size_t size, const std::nothrow_t& tag) noexcept {
  return operator new(size, tag);
}
void operator delete(void* p) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }
void operator delete(void* p, const std::nothrow_t&) noexcept { std::free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { std::free(p); }

#if defined(__SANITIZE_ADDRESS__)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(memory_sanitizer)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#endif
#endif
#if defined(__GLIBC__) && !defined(LOTWISE_TEST_NO_MALLOC_HOOK)
#define LOTWISE_TEST_COUNTS_MALLOC 1
extern "C" {
void* __libc_malloc(std::size_t size);
void* __libc_calloc(std::size_t count, std::size_t size);
void* __libc_realloc(void* p, std::size_t size);
void* __libc_memalign(std::size_t alignment, std::size_t size);
void __libc_free(void* p);

void* malloc(std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_malloc(size);
}
void* calloc(std::size_t count, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_calloc(count, size);
}
void* realloc(void* p, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_realloc(p, size);
}
void* aligned_alloc(std::size_t alignment, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_memalign(alignment, size);
}
void free(void* p) noexcept { __libc_free(p); }
}
#endif

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("the variation allocation counters see allocations", "[fast][allocation]") {
  const std::size_t news = new_calls.load(), mallocs = malloc_calls.load();
  auto* p = new std::vector<double>(100);
  delete p;
  CHECK(new_calls.load() - news >= 2);
#ifdef LOTWISE_TEST_COUNTS_MALLOC
  CHECK(malloc_calls.load() - mallocs >= 2);
#else
  (void)mallocs;
#endif
}

TEST_CASE("drawing and mapping points allocates nothing", "[fast][allocation]") {
  // Every law, a lot, a matched network with coefficients, a correlation and a drawn
  // temperature.
  const Circuit c = resistor_probes({"R1", "R2", "R3", "R4", "R5", "R6", "R7", "R8"}, 1e3);
  std::vector<Variation> vs;
  Variation network({"R1", "R2"}, Distribution::normal, 0.001);
  network.ratio_tolerance = 1e-4;
  network.tempco_tolerance = 25e-6;
  network.tempco_tracking = 2e-6;
  vs.push_back(network);
  Variation lot({"R3"}, Distribution::uniform, 0.01);
  lot.lot_tolerance = 0.01;
  lot.tempco = 100e-6;
  lot.tempco_tolerance = 50e-6;
  vs.push_back(lot);
  vs.push_back(Variation({"R4"}, Distribution::truncated_normal, 0.01, true, 2.0));
  vs.push_back(Variation({"R5"}, Distribution::triangular, 0.01));
  vs.push_back(Variation({"R6"}, Distribution::log_normal, 0.2));
  Variation binned({"R7"}, Distribution::binned, 0.05);
  binned.inner_tolerance = 0.01;
  vs.push_back(binned);
  vs.push_back(Variation({"R8"}, Distribution::fixed));
  Temperature t;
  t.drawn = true;
  t.low = -40.0;
  t.high = 85.0;
  const std::vector<Correlation> rho = {{{"R3", "R4", "R6"}, 0.5}};
  const detail::VariationModel model(c, vs, rho, t);
  const detail::SobolDirections directions(model.dimension());
  std::vector<double> theta(c.parameters().size(), 1.0);
  for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
    CAPTURE(to_string(sampler));
    detail::PointStream stream(model, sampler, 512, &directions);
    detail::BuildScratch scratch = model.make_scratch();
    double sink = 0.0;
    const std::size_t news = new_calls.load(), mallocs = malloc_calls.load();
    for (std::uint64_t chunk = 0; chunk < 4; ++chunk) {
      stream.start(9, chunk, chunk / 2, (chunk % 2) * 512, 512);
      for (int i = 0; i < 512; ++i) {
        model.prepare(stream.next(), scratch);
        model.apply(scratch, model.temperature_of(scratch, 0), theta.data());
        for (double v : theta) sink += v;
      }
    }
    CHECK(new_calls.load() - news == 0);
    CHECK(malloc_calls.load() - mallocs == 0);
    CHECK(std::isfinite(sink));
  }
}
