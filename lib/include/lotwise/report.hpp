#pragma once
// Presenting a yield result: lotwise's own JSON report schema (docs/report-format.md)
// and a readable summary table.
#include <string>

#include "lotwise/result.hpp"
#include "lotwise/study.hpp"

namespace lotwise {

/// The caution every report carries.
extern const char* const result_caution;

/// The report as JSON text (schema "lotwise.report", version 1).
std::string report_json(const Study& study, const YieldResult& result);

/// Writes the JSON report to `path` atomically: a temporary file beside it is renamed
/// into place, so a failure never leaves a partial report. Throws Error on failure.
void write_report(const std::string& path, const Study& study, const YieldResult& result);

/// A plain-text summary: yield with its interval, each spec and each measurement.
std::string summary_table(const Study& study, const YieldResult& result);

struct WorstCaseResult;
struct ParameterSweepResult;

/// Optional sections of the JSON report (docs/report-format.md): the worst-case analysis
/// (lotwise/worst_case.hpp) and a parameter sweep (lotwise/parameter_sweep.hpp).
struct ReportSections {
  const WorstCaseResult* worst_case = nullptr;
  const ParameterSweepResult* sweep = nullptr;
};

/// The report with the given optional sections.
std::string report_json(const Study& study, const YieldResult& result,
                        const ReportSections& sections);
void write_report(const std::string& path, const Study& study, const YieldResult& result,
                  const ReportSections& sections);

}  // namespace lotwise
