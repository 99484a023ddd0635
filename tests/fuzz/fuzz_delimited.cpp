// libFuzzer target: the delimited-text point reader on arbitrary bytes.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "cylzone/io/read_points.hpp"
#include "fuzz_contract.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  cylzone::fuzz::expect_contract([&] {
    cylzone::fuzz::check_cloud(cylzone::parse_delimited_points(text, "fuzz.csv"));
  });
  return 0;
}
