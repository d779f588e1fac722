// CRC-32 (IEEE 802.3 polynomial, reflected, as used by zip and PNG) of a byte range. Used to detect
// corrupted or truncated snapshot files.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string_view>

namespace bayline::server {

// Returns the CRC-32 of `data`. `previous` chains calls: Crc32(b, Crc32(a)) == Crc32(a + b).
uint32_t Crc32(std::string_view data, uint32_t previous = 0);

}  // namespace bayline::server
