#include "daemon/server/crc32.h"

#include <array>

namespace bayline::server {
namespace {

constexpr uint32_t kPolynomial = 0xEDB88320u;  // 0x04C11DB7 bit-reversed

constexpr std::array<uint32_t, 256> MakeTable() {
  std::array<uint32_t, 256> table{};
  for (uint32_t i = 0; i < 256; ++i) {
    uint32_t c = i;
    for (int bit = 0; bit < 8; ++bit) c = (c & 1u) ? (kPolynomial ^ (c >> 1)) : (c >> 1);
    table[i] = c;
  }
  return table;
}

constexpr std::array<uint32_t, 256> kTable = MakeTable();

}  // namespace

uint32_t Crc32(std::string_view data, uint32_t previous) {
  uint32_t c = ~previous;
  for (unsigned char byte : data) c = kTable[(c ^ byte) & 0xFFu] ^ (c >> 8);
  return ~c;
}

}  // namespace bayline::server
