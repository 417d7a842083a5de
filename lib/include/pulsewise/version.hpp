// Library version.
#pragma once

namespace pulsewise {
inline constexpr const char* kVersion = "0.1.0";
}  // namespace pulsewise
