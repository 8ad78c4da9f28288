// SHA-256 through OpenSSL's EVP digest interface (EVP_sha256), which picks the fastest
// implementation the processor offers (SHA extensions, AVX2, ...).
#include "firmcall/io/sha256.hpp"

#include <openssl/evp.h>

#include <stdexcept>

namespace firmcall {

namespace {

[[noreturn]] void fail(const char* what) {
  throw std::runtime_error(std::string("SHA-256: OpenSSL ") + what + " failed");
}

}  // namespace

void Sha256::ContextFree::operator()(evp_md_ctx_st* ctx) const noexcept {
  EVP_MD_CTX_free(ctx);
}

Sha256::Sha256() : ctx_(EVP_MD_CTX_new()) {
  if (!ctx_) fail("EVP_MD_CTX_new");
  if (EVP_DigestInit_ex(ctx_.get(), EVP_sha256(), nullptr) != 1) fail("EVP_DigestInit_ex");
}

Sha256::~Sha256() = default;
Sha256::Sha256(Sha256&&) noexcept = default;
Sha256& Sha256::operator=(Sha256&&) noexcept = default;

void Sha256::update(std::string_view bytes) {
  if (EVP_DigestUpdate(ctx_.get(), bytes.data(), bytes.size()) != 1) fail("EVP_DigestUpdate");
}

Sha256Digest Sha256::finish() {
  Sha256Digest out{};
  unsigned int size = 0;
  if (EVP_DigestFinal_ex(ctx_.get(), out.data(), &size) != 1 || size != out.size()) {
    fail("EVP_DigestFinal_ex");
  }
  return out;
}

std::string to_hex(const Sha256Digest& digest) {
  static constexpr char kHex[] = "0123456789abcdef";
  std::string s;
  s.reserve(64);
  for (std::uint8_t b : digest) {
    s.push_back(kHex[b >> 4]);
    s.push_back(kHex[b & 15]);
  }
  return s;
}

std::string sha256_hex(std::string_view bytes) {
  Sha256Digest out{};
  unsigned int size = 0;
  if (EVP_Digest(bytes.data(), bytes.size(), out.data(), &size, EVP_sha256(), nullptr) != 1 ||
      size != out.size()) {
    fail("EVP_Digest");
  }
  return to_hex(out);
}

}  // namespace firmcall
