#pragma once
// SHA-256 of a file's bytes (FIPS 180-4), via OpenSSL's EVP interface, for the input records of
// every report. Throws InputError when the file cannot be read.
#include <filesystem>
#include <string>

namespace cylzone::detail {

/// Lower-case hex digest, 64 characters.
std::string sha256_of_file(const std::filesystem::path& file);

}  // namespace cylzone::detail
