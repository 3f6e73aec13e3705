#pragma once
// Content hashes of the screening store: SHA-256 (FIPS 180-4, through OpenSSL) as 64
// lower-case hexadecimal digits. A molecule's hash names its content, a run's hash its
// settings; together they decide what a store already holds.
#include <cstdint>
#include <string>
#include <string_view>

namespace overtone {

std::string sha256_hex(std::string_view data);

// The first 64 bits of a hexadecimal hash as a number (for spreading work by hash).
std::uint64_t hash_prefix(const std::string& hex);

}  // namespace overtone
