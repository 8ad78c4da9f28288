// SHA-256 (NIST FIPS 180-4, "Secure Hash Standard"), used to record the digest of each input
// file a monitoring run was scored from. Pure computation: no I/O, nothing throws.
//
// **Example**:
//   firmcall::Sha256 h;
//   h.update("abc");
//   std::string hex = firmcall::to_hex(h.finish());  // "ba7816bf...f20015ad"
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>

namespace firmcall {

using Sha256Digest = std::array<std::uint8_t, 32>;

/// Incremental SHA-256 of a byte stream.
class Sha256 {
 public:
  /// Appends bytes to the message.
  void update(std::string_view bytes) noexcept;
  /// Pads the message and returns its digest; the object must not be updated afterwards.
  Sha256Digest finish() noexcept;

 private:
  void compress(const std::uint8_t* block) noexcept;
  std::array<std::uint32_t, 8> state_ = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                         0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};
  std::array<std::uint8_t, 64> buffer_{};
  std::size_t buffered_ = 0;  ///< bytes waiting in buffer_
  std::uint64_t length_ = 0;  ///< message length so far, bytes
};

/// Lower-case hexadecimal of a digest (64 characters).
std::string to_hex(const Sha256Digest& digest);

/// SHA-256 of `bytes` as 64 lower-case hexadecimal characters.
std::string sha256_hex(std::string_view bytes);

}  // namespace firmcall
