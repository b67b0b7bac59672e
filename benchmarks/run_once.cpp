// One timed run of a study, for the memory and thread-scaling series of run_all.py:
//
//   lotwise_run_once <design.toml> <samples> [threads] [attribution 0/1]
//
// Prints one JSON line: samples, threads, seconds, samples_per_s and max_rss_kib (the
// process's peak resident set, from getrusage) after the run. Per-sample rows are not kept.
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>

#include <lotwise/lotwise.hpp>

int main(int argc, char** argv) {
  if (argc < 3) {
    std::fprintf(stderr,
                 "usage: lotwise_run_once <design.toml> <samples> [threads] [attribution]\n");
    return 2;
  }
  try {
    const lotwise::Study study(lotwise::load_design(argv[1]));
    lotwise::RunOptions o;
    o.samples = std::strtoull(argv[2], nullptr, 10);
    o.threads = argc > 3 ? static_cast<unsigned>(std::atoi(argv[3])) : 1u;
    o.attribution = argc > 4 ? std::atoi(argv[4]) != 0 : true;
    o.seed = 7;
    const auto start = std::chrono::steady_clock::now();
    const lotwise::YieldResult r = study.run(o);
    const double seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    rusage usage{};
    getrusage(RUSAGE_SELF, &usage);
    std::printf("{\"samples\": %llu, \"threads\": %u, \"seconds\": %.6f, \"samples_per_s\": %.1f, "
                "\"max_rss_kib\": %ld, \"yield\": %.6f}\n",
                static_cast<unsigned long long>(r.samples), o.threads, seconds,
                static_cast<double>(r.samples) / seconds, usage.ru_maxrss, r.yield);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "lotwise_run_once: %s\n", e.what());
    return 1;
  }
  return 0;
}
