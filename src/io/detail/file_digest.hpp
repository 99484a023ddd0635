#pragma once
// SHA-256 of a file's bytes (FIPS 180-4), via OpenSSL's EVP interface, for the input records of
// every report. Throws InputError when the file cannot be read.
#include <filesystem>
#include <string>
#include <string_view>

namespace cylzone::detail {

/// Lower-case hex digest, 64 characters, of the file's bytes as they are now on disk.
std::string sha256_of_file(const std::filesystem::path& file);

/// Lower-case hex digest, 64 characters, of `bytes`: the digest of exactly the bytes that were
/// parsed, when the caller hashes the buffer it parses.
std::string sha256_of_bytes(std::string_view bytes);

}  // namespace cylzone::detail
