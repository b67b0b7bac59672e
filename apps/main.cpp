// The lotwise command-line program: runs a design file and prints or writes its yield.
#include <unistd.h>

#include <atomic>
#include <chrono>
#include <csignal>
#include <cstdint>
#include <cstdio>
#include <iostream>
#include <limits>
#include <string>
#include <utility>
#include <vector>

#include <CLI/CLI.hpp>

#include "lotwise/lotwise.hpp"

namespace {

std::atomic<bool> stop_requested{false};

extern "C" void on_interrupt(int) {
  stop_requested.store(true);
  std::signal(SIGINT, SIG_DFL);  // a second Ctrl-C ends the program at once
}

// Progress on a terminal only, at most five updates a second.
class ProgressLine {
 public:
  explicit ProgressLine(bool enabled) : enabled_(enabled && isatty(STDERR_FILENO)) {}
  void update(std::uint64_t done, std::uint64_t total) {
    if (!enabled_) return;
    const auto now = std::chrono::steady_clock::now();
    if (done < total && now - last_ < std::chrono::milliseconds(200)) return;
    last_ = now;
    std::fprintf(stderr, "\r  %3d %%  %llu of %llu samples", static_cast<int>(100.0 * done / total),
                 static_cast<unsigned long long>(done), static_cast<unsigned long long>(total));
    std::fflush(stderr);
    shown_ = true;
  }
  void finish() {
    if (shown_) std::fprintf(stderr, "\r%60s\r", "");
  }

 private:
  bool enabled_;
  bool shown_ = false;
  std::chrono::steady_clock::time_point last_{};
};

// Errors found while compiling the study (topology, singular network, overlapping
// variations) carry no file position; prefix the file so the message says which design.
lotwise::Study compile(const std::string& path) {
  lotwise::Design design = lotwise::load_design(path);
  try {
    return lotwise::Study(std::move(design));
  } catch (const lotwise::CircuitError& e) {
    throw lotwise::CircuitError(path + ": " + e.what());
  } catch (const lotwise::DesignError& e) {
    throw lotwise::DesignError(path + ": " + e.what());
  }
}

// Settings of the statistics options (lotwise worst-case, sweep, run).
struct StatisticsSettings {
  double confidence = 0.95;
  double target_half_width = 0.0;
  std::uint32_t tolerance_digits = 0;
  std::string sampler;
  std::uint32_t replicates = 0;
  std::uint64_t builds_per_lot = 0;
  bool no_attribution = false;
  bool worst_case = false;
  std::vector<std::string> nominal_axes;    ///< "PATTERN=v1,v2,..."
  std::vector<std::string> tolerance_axes;  ///< "PATTERN=t1,t2,..."
};

lotwise::RunOptions options_for(const lotwise::Study& study, const CLI::App& cmd,
                                std::uint64_t samples, std::uint64_t seed, unsigned threads,
                                const StatisticsSettings& stats) {
  lotwise::RunOptions options;
  const auto& defaults = study.design().run;
  options.samples = cmd.count("--samples") ? samples : defaults.samples;
  options.seed = cmd.count("--seed") ? seed : defaults.seed;
  options.threads = cmd.count("--threads") ? threads : defaults.threads;
  options.sampler = defaults.sampler;
  for (auto k : {lotwise::Sampler::monte_carlo, lotwise::Sampler::sobol,
                 lotwise::Sampler::latin_hypercube}) {
    if (cmd.count("--sampler") && stats.sampler == lotwise::to_string(k)) options.sampler = k;
  }
  options.replicates = cmd.count("--replicates") ? stats.replicates : defaults.replicates;
  options.tolerance_digits =
      cmd.count("--tolerance-digits") ? stats.tolerance_digits : defaults.tolerance_digits;
  options.builds_per_lot =
      cmd.count("--builds-per-lot") ? stats.builds_per_lot : defaults.builds_per_lot;
  options.attribution = !stats.no_attribution;
  options.confidence = cmd.count("--confidence") ? stats.confidence : defaults.confidence;
  options.target_half_width =
      cmd.count("--target-half-width") ? stats.target_half_width : defaults.target_half_width;
  return options;
}

int run_command(const std::string& path, const CLI::App& cmd, std::uint64_t samples,
                std::uint64_t seed, unsigned threads, const std::string& report, bool quiet,
                double require_yield, const StatisticsSettings& stats) {
  lotwise::Study study = compile(path);
  lotwise::RunOptions options = options_for(study, cmd, samples, seed, threads, stats);
  options.stop = &stop_requested;
  ProgressLine progress(!quiet);
  options.progress = [&](std::uint64_t done, std::uint64_t total) { progress.update(done, total); };
  std::signal(SIGINT, on_interrupt);
  const lotwise::YieldResult result = study.run(options);
  std::signal(SIGINT, SIG_DFL);
  progress.finish();
  lotwise::WorstCaseResult worst;
  lotwise::ReportSections sections;
  if (stats.worst_case) {
    worst = lotwise::worst_case(study);
    sections.worst_case = &worst;
  }
  if (!report.empty()) lotwise::write_report(report, study, result, sections);
  if (!quiet) std::cout << lotwise::summary_table(study, result);
  if (!quiet && stats.worst_case) std::cout << "\n" << lotwise::worst_case_table(worst, &result);
  if (!report.empty() && !quiet) std::cout << "Report written to " << report << "\n";
  if (!result.complete) return 130;
  if (cmd.count("--require-yield") && !(result.interval.low >= require_yield)) {
    std::cerr << "lotwise: the yield's lower confidence bound " << result.interval.low
              << " is below the required " << require_yield << "\n";
    return 3;
  }
  return 0;
}

// Extreme-value and RSS worst case beside a Monte Carlo run.
int worst_case_command(const std::string& path, const CLI::App& cmd, std::uint64_t samples,
                       std::uint64_t seed, unsigned threads, const std::string& report,
                       const StatisticsSettings& stats) {
  lotwise::Study study = compile(path);
  const lotwise::WorstCaseResult worst = lotwise::worst_case(study);
  lotwise::RunOptions options = options_for(study, cmd, samples, seed, threads, stats);
  options.stop = &stop_requested;
  std::signal(SIGINT, on_interrupt);
  const lotwise::YieldResult result = study.run(options);
  std::signal(SIGINT, SIG_DFL);
  lotwise::ReportSections sections;
  sections.worst_case = &worst;
  if (!report.empty()) lotwise::write_report(report, study, result, sections);
  const auto& d = study.design();
  std::cout << "lotwise worst case: " << (d.title.empty() ? "(untitled design)" : d.title) << "\n"
            << "Monte Carlo beside it: " << result.samples << " samples, seed " << result.seed
            << "\n\n"
            << lotwise::worst_case_table(worst, &result);
  if (!report.empty()) std::cout << "Report written to " << report << "\n";
  return result.complete ? 0 : 130;
}

// "PATTERN=v1,v2,..." -> an axis; values take SI prefixes and % / ppm.
lotwise::ParameterSweepAxis parse_axis(const std::string& text, lotwise::SweepSetting setting) {
  const std::size_t eq = text.find('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == text.size()) {
    throw lotwise::DesignError("a sweep axis is PARAMETER=VALUE,VALUE,... (got '" + text + "')");
  }
  lotwise::ParameterSweepAxis axis;
  axis.setting = setting;
  axis.parameter = text.substr(0, eq);
  std::size_t start = eq + 1;
  while (start <= text.size()) {
    const std::size_t comma = std::min(text.find(',', start), text.size());
    axis.values.push_back(lotwise::parse_quantity(text.substr(start, comma - start)).value);
    start = comma + 1;
  }
  return axis;
}

int sweep_command(const std::string& path, const CLI::App& cmd, std::uint64_t samples,
                  std::uint64_t seed, unsigned threads, const std::string& report,
                  const StatisticsSettings& stats) {
  lotwise::Study study = compile(path);
  std::vector<lotwise::ParameterSweepAxis> axes;
  for (const auto& a : stats.nominal_axes) axes.push_back(parse_axis(a, lotwise::SweepSetting::nominal));
  for (const auto& a : stats.tolerance_axes) {
    axes.push_back(parse_axis(a, lotwise::SweepSetting::tolerance));
  }
  if (axes.empty()) axes = study.design().sweep;  // the file's [[sweep]] axes
  if (axes.empty() || axes.size() > 2) {
    throw lotwise::DesignError(
        "a sweep takes one or two axes (--nominal, --tolerance, or [[sweep]] in the file)");
  }
  lotwise::RunOptions options = options_for(study, cmd, samples, seed, threads, stats);
  const lotwise::ParameterSweepResult sweep = lotwise::sweep_parameters(study.design(), axes, options);
  if (!report.empty()) {
    const lotwise::YieldResult base = study.run(options);
    lotwise::ReportSections sections;
    sections.sweep = &sweep;
    lotwise::write_report(report, study, base, sections);
  }
  const auto& d = study.design();
  std::cout << "lotwise sweep: " << (d.title.empty() ? "(untitled design)" : d.title) << "\n"
            << options.samples << " samples per point, seed " << options.seed << "\n\n"
            << lotwise::sweep_table(sweep);
  if (!report.empty()) std::cout << "Report written to " << report << "\n";
  return 0;
}

int check_command(const std::string& path) {
  lotwise::Study study = compile(path);
  const auto& d = study.design();
  std::cout << path << ": " << (d.title.empty() ? "(untitled)" : d.title) << "\n"
            << d.circuit.elements().size() << " parts, " << d.circuit.nodes().size() + 1
            << " nodes, " << study.varied_parameters().size() << " varied parameters, "
            << d.measurements.size() << " measurements, " << d.specs.size() << " specs\n\n"
            << "Nominal values:\n";
  for (std::size_t i = 0; i < d.measurements.size(); ++i) {
    std::cout << "  " << d.measurements[i].name << " = " << study.nominal_values()[i] << " "
              << lotwise::unit_of(d.measurements[i].kind) << "\n";
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"lotwise: Monte Carlo production-yield analysis of op-amp circuits"};
  app.set_version_flag("--version", std::string("lotwise ") + lotwise::version());
  app.require_subcommand(1);

  std::string path, report;
  std::uint64_t samples = 0, seed = 0;
  unsigned threads = 0;
  bool quiet = false;
  double require_yield = 0.0;
  auto* run = app.add_subcommand("run", "Run the Monte Carlo yield analysis of a design file");
  run->add_option("design", path, "Design file (TOML)")->required()->check(CLI::ExistingFile);
  const CLI::Validator at_least_one(
      [](std::string& text) {
        return text.find_first_not_of("0123456789") == std::string::npos && !text.empty() &&
                       text.find_first_not_of('0') != std::string::npos
                   ? std::string()
                   : "must be a whole number of at least 1, got '" + text + "'";
      },
      "N>=1");
  run->add_option("-n,--samples", samples, "Number of builds to simulate (default: the file's [run] samples)")
      ->check(at_least_one);
  run->add_option("-s,--seed", seed, "Random seed (default: the file's [run] seed)");
  run->add_option("-t,--threads", threads, "Worker threads, 0 for all cores; the answer does not depend on it");
  run->add_option("-r,--report", report, "Write the JSON report to this file");
  run->add_option("--require-yield", require_yield,
                  "Exit with status 3 unless the yield's lower confidence bound reaches this fraction")
      ->check(CLI::Range(0.0, 1.0));
  run->add_flag("-q,--quiet", quiet, "Print nothing but errors");
  StatisticsSettings stats;
  auto add_statistics = [&](CLI::App* cmd) {
    cmd->add_option("-c,--confidence", stats.confidence, "Confidence level of the intervals (default 0.95)")
        ->check(CLI::Range(0.5, 0.999999));
    cmd->add_option("--target-half-width", stats.target_half_width,
                    "Stop once the yield interval's half-width reaches this; --samples is the cap")
        ->check(CLI::Range(0.0, 0.5));
    cmd->add_option("--tolerance-digits", stats.tolerance_digits,
                    "Stop once every measurement's mean, spread and coverage interval are stable to "
                    "this many significant digits of its spread (JCGM 101 7.9); --samples is the cap")
        ->check(CLI::Range(1, 3));
    cmd->add_option("--sampler", stats.sampler,
                    "How builds are drawn: monte_carlo, sobol or latin_hypercube (default: the file's [run] sampler)")
        ->check(CLI::IsMember({"monte_carlo", "sobol", "latin_hypercube"}));
    cmd->add_option("--replicates", stats.replicates,
                    "Independent randomisations whose spread gives standard errors (default: the file's, or automatic)")
        ->check(CLI::Range(1, 65536));
    cmd->add_option("--builds-per-lot", stats.builds_per_lot,
                    "Builds made from one lot (reel) of parts, sharing its lot deviations; adds "
                    "within-lot Cp and Cpk beside the overall Pp and Ppk")
        ->check(CLI::Range(std::uint64_t{1}, std::numeric_limits<std::uint64_t>::max()));
    cmd->add_flag("--no-attribution", stats.no_attribution,
                  "Skip the sensitivity and failure attribution: a quarter to a third less time "
                  "per build; the yield and statistics are the same");
  };
  add_statistics(run);
  run->add_flag("--worst-case", stats.worst_case,
                "Add the extreme-value / RSS worst case to the summary and the report");

  auto* worst = app.add_subcommand(
      "worst-case", "Extreme-value and root-sum-square worst case beside the Monte Carlo quantiles");
  worst->add_option("design", path, "Design file (TOML)")->required()->check(CLI::ExistingFile);
  worst->add_option("-n,--samples", samples, "Monte Carlo builds (default: the file's [run] samples)")
      ->check(at_least_one);
  worst->add_option("-s,--seed", seed, "Random seed (default: the file's [run] seed)");
  worst->add_option("-t,--threads", threads, "Worker threads, 0 for all cores");
  worst->add_option("-r,--report", report, "Write the JSON report (with its worst_case section)");
  add_statistics(worst);

  auto* sweep = app.add_subcommand(
      "sweep", "Yield against one or two nominal values or tolerances");
  sweep->add_option("design", path, "Design file (TOML)")->required()->check(CLI::ExistingFile);
  sweep->add_option("--nominal", stats.nominal_axes,
                    "Sweep nominal values: PARAMETER=VALUE,VALUE,... (a pattern like R2 or RG*)");
  sweep->add_option("--tolerance", stats.tolerance_axes,
                    "Sweep the tolerance of the variations covering PARAMETER: R*=0.1%,1%");
  sweep->add_option("-n,--samples", samples, "Builds per point (default: the file's [run] samples)")
      ->check(at_least_one);
  sweep->add_option("-s,--seed", seed, "Random seed (default: the file's [run] seed)");
  sweep->add_option("-t,--threads", threads, "Worker threads, 0 for all cores");
  sweep->add_option("-r,--report", report, "Write the JSON report (with its sweep section)");
  add_statistics(sweep);

  auto* check = app.add_subcommand("check", "Check a design file and print its nominal values");
  check->add_option("design", path, "Design file (TOML)")->required()->check(CLI::ExistingFile);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int status = app.exit(e);
    return status == 0 ? 0 : 2;  // --help and --version succeed; usage errors are status 2
  }
  try {
    if (*run) {
      return run_command(path, *run, samples, seed, threads, report, quiet, require_yield, stats);
    }
    if (*worst) return worst_case_command(path, *worst, samples, seed, threads, report, stats);
    if (*sweep) return sweep_command(path, *sweep, samples, seed, threads, report, stats);
    return check_command(path);
  } catch (const lotwise::Error& e) {
    std::cerr << "lotwise: error: " << e.what() << "\n";
    return 1;
  } catch (const std::exception& e) {
    std::cerr << "lotwise: internal error: " << e.what() << "\n";
    return 4;
  }
}
