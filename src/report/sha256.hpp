// SHA-256 (FIPS 180-4) of a byte string, as 64 lower-case hex digits: the
// report names the settings it used by their hash.
#pragma once

#include <string>
#include <string_view>

namespace loopaudit::detail {

std::string sha256_hex(std::string_view bytes);

}  // namespace loopaudit::detail
