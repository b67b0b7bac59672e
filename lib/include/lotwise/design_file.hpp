#pragma once
// Reading a design from lotwise's own TOML schema (see docs/design-file.md).
#include <string>

#include "lotwise/design.hpp"

namespace lotwise {

/// Reads a design file. Throws DesignError whose message starts "FILE:LINE:COLUMN: "
/// and names the key or part at fault.
Design load_design(const std::string& path);

/// Reads a design from TOML text; `source_name` is used in messages.
Design parse_design(const std::string& text, const std::string& source_name = "<design>");

}  // namespace lotwise
