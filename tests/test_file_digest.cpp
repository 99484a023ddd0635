// SHA-256 of bytes and of files (io/detail/file_digest.hpp), the digests every report records
// for its inputs. References: the example vectors of FIPS 180-2 (2002), appendix B, repeated in
// the NIST "Examples with intermediate values" for FIPS 180-4: "abc", the 448-bit two-block
// message and one million repetitions of "a" (the last from memory), and the digest of the
// empty message (common practice: it is the value every SHA-256 implementation lists).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cstddef>
#include <filesystem>
#include <string>

#include "cylzone/core/errors.hpp"
#include "io/detail/file_digest.hpp"
#include "temporary_folder.hpp"

using namespace cylzone;
using cylzone::detail::sha256_of_bytes;
using cylzone::detail::sha256_of_file;
using cylzone::testing::TemporaryFolder;
using Catch::Matchers::Contains;

namespace {

const char* const abc_digest = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";
const char* const empty_digest = "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855";
const char* const two_block_message = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
const char* const two_block_digest =
    "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1";
const char* const million_a_digest =
    "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0";

// The reader's buffer is 64 KiB: sizes on both sides of one and several of its boundaries.
constexpr std::size_t buffer = std::size_t(1) << 16;

// Bytes that differ from block to block and are not all printable, so a chunk dropped,
// repeated or reordered changes the digest.
std::string pattern(std::size_t size) {
  std::string bytes(size, '\0');
  for (std::size_t i = 0; i < size; ++i)
    bytes[i] = static_cast<char>((i * 2654435761u + (i >> 13)) & 0xff);
  return bytes;
}

}  // namespace

TEST_CASE("SHA-256 of bytes matches the FIPS 180 example vectors", "[file_digest]") {
  CHECK(sha256_of_bytes("abc") == abc_digest);
  CHECK(sha256_of_bytes("") == empty_digest);
  CHECK(sha256_of_bytes(two_block_message) == two_block_digest);
  CHECK(sha256_of_bytes(std::string(1000000, 'a')) == million_a_digest);
  // Embedded NUL bytes are data, not an end of string.
  CHECK(sha256_of_bytes(std::string("abc\0", 4)) != abc_digest);
  CHECK(sha256_of_bytes(std::string("abc\0", 4)).size() == 64);
}

TEST_CASE("SHA-256 of a file matches the FIPS 180 example vectors", "[file_digest]") {
  const TemporaryFolder folder("digest");
  CHECK(sha256_of_file(folder.write("abc.txt", "abc")) == abc_digest);
  CHECK(sha256_of_file(folder.write("empty.txt", "")) == empty_digest);
  CHECK(sha256_of_file(folder.write("two-block.txt", two_block_message)) == two_block_digest);
  // One million bytes: fifteen full reads of the buffer and a partial one.
  CHECK(sha256_of_file(folder.write("million.txt", std::string(1000000, 'a'))) ==
        million_a_digest);
}

TEST_CASE("SHA-256 of a file equals that of its bytes across the read buffer's boundaries",
          "[file_digest]") {
  const TemporaryFolder folder("digest");
  for (const std::size_t size : {buffer - 1, buffer, buffer + 1, 2 * buffer, 3 * buffer + 17}) {
    INFO("size " << size);
    const std::string bytes = pattern(size);
    const std::filesystem::path file = folder.write("pattern.bin", bytes);
    REQUIRE(std::filesystem::file_size(file) == size);
    const std::string digest = sha256_of_file(file);
    CHECK(digest == sha256_of_bytes(bytes));
    CHECK(digest.size() == 64);
    CHECK(digest.find_first_not_of("0123456789abcdef") == std::string::npos);
    // One bit changed in the last byte of the first read changes the digest.
    std::string changed = bytes;
    const std::size_t last = std::min(size, buffer) - 1;
    changed[last] = static_cast<char>(changed[last] ^ 1);
    CHECK(sha256_of_file(folder.write("changed.bin", changed)) != digest);
  }
}

TEST_CASE("SHA-256 of a missing file is an InputError naming the file", "[file_digest][errors]") {
  const TemporaryFolder folder("digest");
  const std::filesystem::path missing = folder.path() / "missing.csv";
  try {
    (void)sha256_of_file(missing);
    FAIL("no error for a missing file");
  } catch (const InputError& e) {
    CHECK(e.file() == missing.string());
    CHECK_THAT(std::string(e.what()), Contains("missing.csv") && Contains("cannot open"));
  }
}
