#pragma once
// One axis of a parameter sweep: what it changes and the settings it steps through.
#include <string>
#include <vector>

namespace lotwise {

/// What an axis of a parameter sweep changes.
enum class SweepSetting {
  nominal,    ///< the nominal value of every parameter the pattern matches
  tolerance,  ///< the `tolerance` of every variation covering a parameter the pattern matches
};

const char* to_string(SweepSetting setting);

struct ParameterSweepAxis {
  SweepSetting setting = SweepSetting::nominal;
  /// A parameter name or pattern ('*' matches any run of characters other than '.').
  std::string parameter;
  /// The settings, in the parameter's unit (nominal) or as the variation's tolerance
  /// (a fraction of nominal when the variation is relative: 0.01 for 1 %).
  std::vector<double> values;
};

}  // namespace lotwise
