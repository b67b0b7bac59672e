#pragma once

namespace lotwise {
/// The library's version, "MAJOR.MINOR.PATCH".
const char* version();
}  // namespace lotwise
