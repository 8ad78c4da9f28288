// SHA-256 (NIST FIPS 180-4, "Secure Hash Standard"), used to record the digest of each input
// file a monitoring run was scored from. The digest is computed by OpenSSL's libcrypto (EVP
// interface); no I/O. Errors from libcrypto (in practice only a failed allocation) throw
// std::runtime_error.
//
// **Example**:
//   firmcall::Sha256 h;
//   h.update("abc");
//   std::string hex = firmcall::to_hex(h.finish());  // "ba7816bf...f20015ad"
#pragma once

#include <array>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

struct evp_md_ctx_st;  // OpenSSL's EVP_MD_CTX, kept out of this header

namespace firmcall {

using Sha256Digest = std::array<std::uint8_t, 32>;

/// Incremental SHA-256 of a byte stream. Movable, not copyable.
class Sha256 {
 public:
  Sha256();
  ~Sha256();
  Sha256(Sha256&&) noexcept;
  Sha256& operator=(Sha256&&) noexcept;
  Sha256(const Sha256&) = delete;
  Sha256& operator=(const Sha256&) = delete;

  /// Appends bytes to the message.
  void update(std::string_view bytes);
  /// Pads the message and returns its digest; the object must not be updated afterwards.
  Sha256Digest finish();

 private:
  struct ContextFree {
    void operator()(evp_md_ctx_st* ctx) const noexcept;
  };
  std::unique_ptr<evp_md_ctx_st, ContextFree> ctx_;
};

/// Lower-case hexadecimal of a digest (64 characters).
std::string to_hex(const Sha256Digest& digest);

/// SHA-256 of `bytes` as 64 lower-case hexadecimal characters.
std::string sha256_hex(std::string_view bytes);

}  // namespace firmcall
