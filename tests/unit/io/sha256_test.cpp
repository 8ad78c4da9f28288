// Tests of the SHA-256 digest used to identify recorded input files.
#include <doctest/doctest.h>

#include <cstdio>
#include <random>
#include <string>

#include "firmcall/io/sha256.hpp"
#include "test_util.hpp"

using firmcall::sha256_hex;

TEST_CASE("SHA-256 matches the published test vectors") {
  // Ref: NIST FIPS 180-2, Appendix B (one-block "abc", two-block 448-bit message, one million 'a');
  // digests as printed there (from memory; the same values NIST's example files list).
  CHECK(sha256_hex("abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  CHECK(sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq") ==
        "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  CHECK(sha256_hex(std::string(1000000, 'a')) ==
        "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
  // Empty message (common practice: the well-known digest of zero bytes, from memory).
  CHECK(sha256_hex("") == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST_CASE("SHA-256 of a 1 MiB message matches Python's hashlib") {
  // Ref: Python's hashlib (an independent implementation), digest taken as a literal from
  //   python3 -c 'import hashlib; print(hashlib.sha256(bytes((i*7+3)%251 for i in
  //   range(1<<20))).hexdigest())'
  std::string data(std::size_t{1} << 20, '\0');
  for (std::size_t i = 0; i < data.size(); ++i) data[i] = static_cast<char>((i * 7 + 3) % 251);
  CHECK(sha256_hex(data) == "1ac437f476c488acba4000af7ae89ef53f7ffbeef2e937850985f5ceb8b5ae6f");
}

TEST_CASE("SHA-256 agrees with coreutils sha256sum around every padding boundary, fed in pieces") {
  // Ref: GNU coreutils sha256sum, an independent implementation, run on the same bytes.
  firmcall::testing::TempDir dir;
  std::mt19937 rng(7);
  for (std::size_t n : {1, 55, 56, 57, 63, 64, 65, 119, 120, 128, 1000, 4099}) {
    std::string data(n, '\0');
    for (char& c : data) c = static_cast<char>(rng() & 0xff);
    const std::string path = dir.write("m.bin", data);
    std::string expected;
    if (FILE* p = ::popen(("sha256sum '" + path + "'").c_str(), "r")) {
      char buf[128] = {};
      if (std::fgets(buf, sizeof buf, p)) expected.assign(buf, 64);
      ::pclose(p);
    }
    REQUIRE(expected.size() == 64);
    CHECK(sha256_hex(data) == expected);
    // The same message fed in uneven pieces.
    firmcall::Sha256 h;
    for (std::size_t at = 0, step = 1; at < n; at += step, step = step * 3 % 71 + 1) {
      h.update(std::string_view(data).substr(at, step));
    }
    CHECK(firmcall::to_hex(h.finish()) == expected);
  }
}
