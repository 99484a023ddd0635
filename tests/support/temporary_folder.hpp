#pragma once
// A fresh folder under the system's temporary directory for tests that write files, removed
// with everything in it when the object goes out of scope.

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <system_error>

namespace cylzone::testing {

class TemporaryFolder {
 public:
  explicit TemporaryFolder(const std::string& tag = "test") {
    std::random_device device;
    path_ = std::filesystem::temp_directory_path() /
            ("cylzone-" + tag + "-" +
             std::to_string(std::uniform_int_distribution<std::uint64_t>()(device)));
    std::filesystem::create_directories(path_);
  }
  ~TemporaryFolder() {
    std::error_code ec;
    std::filesystem::remove_all(path_, ec);
  }
  TemporaryFolder(const TemporaryFolder&) = delete;
  TemporaryFolder& operator=(const TemporaryFolder&) = delete;

  const std::filesystem::path& path() const { return path_; }

  /// Writes `bytes` unchanged (binary mode) to `name` in the folder and returns its path.
  std::filesystem::path write(const std::string& name, const std::string& bytes) const {
    const std::filesystem::path file = path_ / name;
    std::ofstream(file, std::ios::binary).write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    return file;
  }

 private:
  std::filesystem::path path_;
};

}  // namespace cylzone::testing
