#include "screen/hashing.hpp"

#include <openssl/evp.h>

#include <array>

#include "core/error.hpp"

namespace overtone {

std::string sha256_hex(std::string_view data) {
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  if (EVP_Digest(data.data(), data.size(), digest.data(), &length, EVP_sha256(), nullptr) != 1)
    throw Error("sha-256 digest failed in openssl");
  static const char* digits = "0123456789abcdef";
  std::string hex;
  hex.reserve(2 * length);
  for (unsigned int i = 0; i < length; ++i) {
    hex.push_back(digits[digest[i] >> 4]);
    hex.push_back(digits[digest[i] & 0xF]);
  }
  return hex;
}

std::uint64_t hash_prefix(const std::string& hex) {
  std::uint64_t value = 0;
  for (std::size_t i = 0; i < 16 && i < hex.size(); ++i) {
    const char c = hex[i];
    const int digit = c >= '0' && c <= '9' ? c - '0' : (c >= 'a' && c <= 'f' ? c - 'a' + 10 : 0);
    value = (value << 4) | static_cast<std::uint64_t>(digit);
  }
  return value;
}

}  // namespace overtone
