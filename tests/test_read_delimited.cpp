// Delimited-text point input: number parsing against the C library's strtod, every separator,
// header, comment and line-ending variant, units, vectors, and every bad-input case.
#include <catch2/catch.hpp>

#include <algorithm>
#include <array>

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <random>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/delimited_text.hpp"
#include "io/detail/text_parsing.hpp"
#include "expect_input_error.hpp"
#include "temporary_folder.hpp"

namespace fs = std::filesystem;
using cylzone::InputError;
using cylzone::LengthUnit;
using cylzone::PointCloud;
using cylzone::ReadOptions;
using cylzone::testing::expect_input_error;
using cylzone::testing::TemporaryFolder;

namespace {

PointCloud parse(const std::string& text, const ReadOptions& options = {}) {
  return cylzone::parse_delimited_points(text, "points.csv", options);
}

void expect_parse_error(const std::string& text, std::size_t line, const std::string& problem) {
  expect_input_error([&] { parse(text); }, "points.csv", line, problem);
}

std::uint64_t bits(double value) {
  std::uint64_t b = 0;
  std::memcpy(&b, &value, sizeof b);
  return b;
}

/// The reference: the C library's strtod. The test process never calls setlocale, so strtod
/// runs in the "C" locale (C11 7.11.1.1: the "C" locale is selected at program startup).
double strtod_reference(const std::string& text) {
  char* end = nullptr;
  const double value = std::strtod(text.c_str(), &end);
  REQUIRE(end == text.c_str() + text.size());
  return value;
}

std::string printf_text(const char* format, int precision, double value) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, precision, value);
  return buffer;
}

fs::path fixture(const std::string& name) {
  return fs::path(CYLZONE_TEST_DATA_DIR) / "input" / name;
}

}  // namespace

// ====================================================================== number parsing

TEST_CASE("numbers agree bit for bit with strtod on random doubles", "[read][delimited]") {
  // Reference: strtod of the C library (ISO C 7.22.1.3, correctly rounded in glibc). Random bit
  // patterns cover every binade including subnormals; %.17g round-trips a double exactly, fewer
  // digits and %e exercise rounding of short decimals.
  std::mt19937_64 rng(20240611);
  std::uniform_int_distribution<std::uint64_t> any_bits;
  std::uniform_real_distribution<double> coordinate(-2000.0, 2000.0);
  std::uniform_int_distribution<int> digits(1, 17);
  std::vector<std::string> texts;
  while (texts.size() < 3000) {
    const std::uint64_t b = any_bits(rng);
    double value = 0.0;
    std::memcpy(&value, &b, sizeof value);
    if (std::isfinite(value)) texts.push_back(printf_text("%.*g", 17, value));
  }
  for (int i = 0; i < 1500; ++i) texts.push_back(printf_text("%.*g", digits(rng), coordinate(rng)));
  for (int i = 0; i < 1500; ++i) texts.push_back(printf_text("%.*e", digits(rng), coordinate(rng)));
  for (int i = 0; i < 1500; ++i) texts.push_back(printf_text("%.*f", digits(rng) % 11, coordinate(rng)));

  std::string csv;
  for (std::size_t i = 0; i < texts.size(); i += 3)
    csv += texts[i] + "," + texts[i + 1] + "," + texts[i + 2] + "\n";
  const PointCloud cloud = parse(csv);
  REQUIRE(cloud.size() * 3 == texts.size());
  std::size_t mismatches = 0;
  for (std::size_t i = 0; i < texts.size(); ++i) {
    const double read = cloud.points(static_cast<Eigen::Index>(i % 3), static_cast<Eigen::Index>(i / 3));
    if (bits(read) != bits(strtod_reference(texts[i]))) {
      ++mismatches;
      UNSCOPED_INFO("text " << texts[i]);
    }
  }
  CHECK(mismatches == 0);
}

TEST_CASE("numbers agree with strtod on hard and special cases", "[read][delimited]") {
  // Reference: strtod (as above). The halfway cases are from the binary64 format itself
  // (IEEE 754-2008 4.3.1, round half to even): 1 + 2^-53 is exactly between 1 and 1 + 2^-52,
  // 2^53 + 1 exactly between 2^53 and 2^53 + 2.
  const std::vector<std::string> texts = {
      "0", "-0", "-0.0", "0.0e0", "+0", "+1.5", ".5", "-.5", "5.", "1E+05", "1e-05", "1e5",
      "4.9406564584124654e-324",     // smallest subnormal
      "2.4703282292062328e-324",     // just above half of it: rounds up to it
      "2.2250738585072011e-308",     // just below the smallest normal
      "2.2250738585072014e-308",     // smallest normal
      "1.7976931348623157e308",      // largest finite
      "1e-400", "-1e-400",           // underflow: strtod returns a signed zero
      "0.1000000000000000055511151231257827021181583404541015625",  // 0.1 exactly
      "1.00000000000000011102230246251565404236316680908203125",    // 1 + 2^-53: ties to 1
      "1.00000000000000011102230246251565404236316680908203126",    // just above: 1 + 2^-52
      "9007199254740993",            // 2^53 + 1: ties to 2^53
      "123456789012345678901234567890", "0.000000000000000000000000000001234",
      "-987.65432109876543210", "1.5e+300", "-2.5E-300"};
  for (const std::string& text : texts) {
    double value = -7.0;
    INFO("text " << text);
    REQUIRE(cylzone::detail::parse_number(text.data(), text.data() + text.size(), value) ==
            cylzone::detail::NumberStatus::ok);
    CHECK(bits(value) == bits(strtod_reference(text)));
  }
}

TEST_CASE("number syntax outside the decimal form is refused", "[read][delimited]") {
  using cylzone::detail::NumberStatus;
  const auto status = [](const std::string& text) {
    double value = 0.0;
    return cylzone::detail::parse_number(text.data(), text.data() + text.size(), value);
  };
  CHECK(status("nan") == NumberStatus::not_finite);
  CHECK(status("-inf") == NumberStatus::not_finite);
  CHECK(status("Infinity") == NumberStatus::not_finite);
  CHECK(status("1e400") == NumberStatus::out_of_range);
  CHECK(status("-1.8e308") == NumberStatus::out_of_range);
  for (const char* text : {"", "-", "+", "+-1", "++1", "1.5.3", "1e", "e5", "0x10", "1,5", "12a",
                           "1 2", "abc", "\"1\""})
    CHECK(status(text) == NumberStatus::not_a_number);
}

// ====================================================================== layouts

TEST_CASE("every separator kind is detected from the first data line", "[read][delimited]") {
  const std::vector<std::string> files = {
      "1,2,3\n4,5,6\n",          "1 , 2 ,3\n 4,  5,6 \n", "1;2;3\n4;5;6\n",
      "1\t2\t3\n4\t5\t6\n",      "1 2 3\n4   5\t 6\n",     "  1  2  3\n\t4 5 6\n",
      "1 ;2; 3\n4;5 ;6\n"};
  for (const std::string& text : files) {
    INFO("file " << text);
    const PointCloud cloud = parse(text);
    REQUIRE(cloud.size() == 2);
    CHECK_FALSE(cloud.has_vectors());
    CHECK(cloud.points(0, 0) == 1.0);
    CHECK(cloud.points(2, 0) == 3.0);
    CHECK(cloud.points(0, 1) == 4.0);
    CHECK(cloud.points(2, 1) == 6.0);
  }
}

TEST_CASE("headers name the columns in any order and case", "[read][delimited]") {
  SECTION("x y z in capitals, extra columns ignored") {
    const PointCloud cloud = parse("ID,X,Y,Z,label\nP1,1,2,3,bore B\nP2,4,5,6,\n");
    REQUIRE(cloud.size() == 2);
    CHECK(cloud.points.col(1) == Eigen::Vector3d(4, 5, 6));
  }
  SECTION("reordered columns") {
    const PointCloud cloud = parse("z;x;y\n3;1;2\n");
    CHECK(cloud.points.col(0) == Eigen::Vector3d(1, 2, 3));
  }
  SECTION("vectors as i j k") {
    const PointCloud cloud = parse("x y z i j k\n1 2 3 0 0 2\n");
    REQUIRE(cloud.has_vectors());
    CHECK(cloud.vectors.col(0) == Eigen::Vector3d(0, 0, 1));
  }
  SECTION("vectors as NX NY NZ, between other columns") {
    const PointCloud cloud = parse("NX,x,NY,y,NZ,z,dev\n0,1,-5,2,0,3,0.004\n");
    REQUIRE(cloud.has_vectors());
    CHECK(cloud.points.col(0) == Eigen::Vector3d(1, 2, 3));
    CHECK(cloud.vectors.col(0) == Eigen::Vector3d(0, -1, 0));
  }
  SECTION("vectors as u v w, quoted names") {
    const PointCloud cloud = parse("\"x\",\"y\",\"z\",\"u\",\"v\",\"w\"\n1,2,3,4,0,0\n");
    REQUIRE(cloud.has_vectors());
    CHECK(cloud.vectors.col(0) == Eigen::Vector3d(1, 0, 0));
  }
  SECTION("six columns without a header are x y z i j k") {
    const PointCloud cloud = parse("1 2 3 0 3 4\n");
    REQUIRE(cloud.has_vectors());
    CHECK(cloud.vectors(1, 0) == Approx(0.6).epsilon(1e-15));
    CHECK(cloud.vectors(2, 0) == Approx(0.8).epsilon(1e-15));
  }
}

TEST_CASE("comments, blank lines, CRLF, BOM and a missing final newline", "[read][delimited]") {
  const std::string expected_last = "7,8,9";
  const std::vector<std::string> files = {
      "# exported points\n\nx,y,z # header\n1,2,3\n\n# level 2\n4,5,6   # note\n7,8,9\n",
      "x,y,z\r\n1,2,3\r\n4,5,6\r\n\r\n7,8,9\r\n",
      "\xEF\xBB\xBFx,y,z\n1,2,3\n4,5,6\n7,8,9\n",
      "\xEF\xBB\xBF" "1,2,3\r\n4,5,6\r\n7,8,9",
      "1,2,3\n4,5,6\n7,8,9",
      "#only a comment first\r\n   \t\r\n1 2 3\r\n4 5 6 #x\r\n7 8 9#"};
  for (const std::string& text : files) {
    INFO("file " << text);
    const PointCloud cloud = parse(text);
    REQUIRE(cloud.size() == 3);
    CHECK(cloud.points.col(0) == Eigen::Vector3d(1, 2, 3));
    CHECK(cloud.points.col(1) == Eigen::Vector3d(4, 5, 6));
    CHECK(cloud.points.col(2) == Eigen::Vector3d(7, 8, 9));
  }
}

TEST_CASE("inch files are converted at 25.4 mm per inch, vectors unchanged", "[read][delimited]") {
  // The international inch is 25.4 mm exactly (by definition, 1959; common practice).
  ReadOptions inch;
  inch.unit = LengthUnit::inch;
  const PointCloud cloud = parse("x,y,z,i,j,k\n1,-2.5,0.1,0,0,1\n", inch);
  CHECK(cloud.file_unit == LengthUnit::inch);
  CHECK(cloud.points(0, 0) == 25.4);
  CHECK(cloud.points(1, 0) == -2.5 * 25.4);
  CHECK(cloud.points(2, 0) == 0.1 * 25.4);
  CHECK(cloud.vectors.col(0) == Eigen::Vector3d(0, 0, 1));
  CHECK(parse("1,2,3\n").file_unit == LengthUnit::millimetre);
}

TEST_CASE("vectors are normalised on reading, at any scale", "[read][delimited]") {
  const PointCloud cloud = parse("0 0 0 3 4 0\n0 0 0 1e200 1e200 0\n0 0 0 0 -1e-200 0\n0 0 0 1 1 1\n");
  REQUIRE(cloud.has_vectors());
  CHECK(cloud.vectors.col(0).isApprox(Eigen::Vector3d(0.6, 0.8, 0.0), 1e-15));
  CHECK(cloud.vectors.col(1).isApprox(Eigen::Vector3d(std::sqrt(0.5), std::sqrt(0.5), 0.0), 1e-15));
  CHECK(cloud.vectors.col(2) == Eigen::Vector3d(0, -1, 0));
  for (Eigen::Index i = 0; i < cloud.vectors.cols(); ++i)
    CHECK(std::abs(cloud.vectors.col(i).norm() - 1.0) < 4e-16);
}

TEST_CASE("points are stored as contiguous columns", "[read][delimited]") {
  const PointCloud cloud = parse("1,2,3\n4,5,6\n");
  const double* data = cloud.points.data();
  CHECK(std::vector<double>(data, data + 6) == std::vector<double>{1, 2, 3, 4, 5, 6});
  CHECK(cloud.source == "points.csv");
  CHECK(cloud.vectors.cols() == 0);
}

// ====================================================================== fixture files

TEST_CASE("fixture: comma-separated probe export with header and vectors", "[read][delimited]") {
  const fs::path file = fixture("probe_points_vectors.csv");
  const PointCloud cloud = cylzone::read_points(file);
  REQUIRE(cloud.size() == 5);
  REQUIRE(cloud.has_vectors());
  CHECK(cloud.source == file.string());
  CHECK(cloud.points.col(0) == Eigen::Vector3d(10, 0, -5));
  CHECK(cloud.points.col(3) == Eigen::Vector3d(0, -10, -5));
  CHECK(cloud.vectors.col(0) == Eigen::Vector3d(1, 0, 0));
  CHECK(cloud.vectors.col(2) == Eigen::Vector3d(-1, 0, 0));
  CHECK(cloud.vectors.col(4).isApprox(Eigen::Vector3d(std::sqrt(0.5), std::sqrt(0.5), 0), 1e-15));
}

TEST_CASE("fixture: blank-separated inch file without final newline", "[read][delimited]") {
  ReadOptions inch;
  inch.unit = LengthUnit::inch;
  const PointCloud cloud = cylzone::read_points(fixture("inch_levels.txt"), inch);
  REQUIRE(cloud.size() == 4);
  CHECK(cloud.points.col(0) == Eigen::Vector3d(25.4, 0, -12.7));
  CHECK(cloud.points.col(3) == Eigen::Vector3d(0, -25.4, -12.7));
}

TEST_CASE("fixture: semicolon file with exponents and a plus sign", "[read][delimited]") {
  const PointCloud cloud = cylzone::read_points(fixture("semicolon_header.csv"));
  REQUIRE(cloud.size() == 2);
  CHECK(cloud.points.col(0) == Eigen::Vector3d(1.5, 2.5, 3.5));
  CHECK(cloud.points.col(1) == Eigen::Vector3d(-0.001, 200, 0));
}

TEST_CASE("fixture: a bad field is reported with the file's own line number", "[read][delimited]") {
  const fs::path file = fixture("bad_field.csv");
  expect_input_error([&] { cylzone::read_points(file); }, file.string(), 4,
                     "field 2 (y) is not a number: 'abc'");
}

// ====================================================================== bad input

TEST_CASE("non-finite and non-numeric fields name the line and the field", "[read][delimited]") {
  expect_parse_error("1,2,3\n4,nan,6\n", 2, "field 2 (y) is NaN or infinite: 'nan'");
  expect_parse_error("x,y,z\n1,2,3\n4,5,-inf\n", 3, "field 3 (z) is NaN or infinite: '-inf'");
  expect_parse_error("1,2,3\n4,5,1e999\n", 2, "field 3 (z) is out of the range of a double");
  expect_parse_error("1 2 3\n4 5 6\n7 8 9x\n", 3, "field 3 (z) is not a number: '9x'");
  expect_parse_error("1,2,3\n\"4\",5,six\n", 2, "field 3 (z) is not a number: 'six'");
  // A long field is quoted and cut short, so the message stays one readable line.
  const std::string junk(200, 'q');
  expect_parse_error("1,2,3\n1,2," + junk + "\n", 2, "'" + std::string(40, 'q') + "...'");
}

TEST_CASE("empty fields and wrong column counts are refused", "[read][delimited]") {
  expect_parse_error("1,,3\n", 1, "field 2 (y) is empty");
  expect_parse_error("1,2,3\n4,5,\n", 2, "field 3 (z) is empty");  // trailing separator
  expect_parse_error("1,2,3\n4,5,6,\n", 2, "found 4 fields, expected 3 as on line 1");
  expect_parse_error("1,2,3\n4,5\n", 2, "found 2 fields, expected 3 as on line 1");
  expect_parse_error("# c\nx,y,z\n1,2,3,4\n", 3, "expected 3 as in the header on line 2");
  expect_parse_error("1,2,3,4\n", 1, "found 4 fields; without a header line each line needs 3");
  expect_parse_error("1 2\n", 1, "found 2 fields");
  expect_parse_error("1,2,3\n4 5 6\n", 2, "fields separated by ','");
  expect_parse_error("x;y;z\n1,5;2,5;3,5\n", 2, "decimal commas are not supported");
}

TEST_CASE("header problems name the missing or repeated column", "[read][delimited]") {
  expect_parse_error("x,y,depth\n1,2,3\n", 1, "header has no column 'z'");
  expect_parse_error("# first\nid,y,z\n1,2,3\n", 2, "header has no column 'x'");
  expect_parse_error("x,y,z,x\n1,2,3,4\n", 1, "header columns 1 ('x') and 4 ('x') both give x");
  expect_parse_error("x,y,z,i,nx,j,k\n", 1, "both give i");
  expect_parse_error("x,y,z,i,j\n1,2,3,4,5\n", 1, "header has vector columns but no 'k'");
  expect_parse_error("1.5,abc,3\n", 1, "field 2 is not a number: 'abc'");
  expect_parse_error("x,y,z\n", 0, "header on line 1 but no data lines");
}

TEST_CASE("a first line that is neither header nor data is named, never read past", "[read][delimited]") {
  // A quoted number loses its quotes only with a character separator (RFC 4180 section 2), so a
  // one-field '"1"' line over tab-separated rows is all numbers and no header: the message must
  // say so (it once dereferenced the end of the field list and printed heap bytes).
  expect_parse_error("\"1\"\n2\t3\t4\n", 1, "neither a header nor data");
  // Names from a hostile header are quoted, cut and made printable in the message.
  try {
    // U+2028 LINE SEPARATOR in UTF-8: some terminals break the line there.
    parse("q,\xe2\x80\xa8,y\n1,2,3\n");
    FAIL("no error");
  } catch (const cylzone::InputError& e) {
    const std::string message = e.what();
    CHECK(std::none_of(message.begin(), message.end(),
                       [](char c) { return static_cast<unsigned char>(c) >= 0x80; }));
    CHECK_THAT(message, Catch::Matchers::Contains("found: 'q', '?\?\?', 'y'"));
  }
}

TEST_CASE("a zero-length vector names its line", "[read][delimited]") {
  expect_parse_error("1 2 3 0 0 1\n4 5 6 0 0 0\n", 2, "vector (i j k) has zero length");
  expect_parse_error("x,y,z,nx,ny,nz\n1,2,3,0,0,-0\n", 2, "zero length");
}

TEST_CASE("empty input, comments only and binary data are refused", "[read][delimited]") {
  expect_parse_error("", 0, "no points: the file is empty");
  expect_parse_error(" \n\r\n\t\n", 0, "no points: the file is empty");
  expect_parse_error("# nothing\n\n# here\n", 0, "only comments and blank lines");
  expect_parse_error("\xEF\xBB\xBF", 0, "the file is empty");
  const std::string with_nul("1,2,3\n4,5\0,6\n", 13);
  expect_parse_error(with_nul, 0, "looks like binary data; expected delimited text");
  expect_parse_error(with_nul, 0, "byte 0x00 at offset 9");
  expect_parse_error(std::string("\xFF\xFEx\0,\0y\0", 8), 0, "UTF-16");
  expect_parse_error("PK\x03\x04\x14\x00\x06\x00", 0, "looks like binary data");
}

TEST_CASE("read_points checks the path before reading", "[read][delimited]") {
  TemporaryFolder folder("read-delimited");
  const fs::path missing = folder.path() / "nowhere.csv";
  expect_input_error([&] { cylzone::read_points(missing); }, missing.string(), 0, "file not found");
  expect_input_error([&] { cylzone::read_points(folder.path()); }, folder.path().string(), 0,
                     "is a directory");
  const fs::path empty = folder.write("empty.csv", "");
  expect_input_error([&] { cylzone::read_points(empty); }, empty.string(), 0, "the file is empty");
  // A binary mesh given as text (no mesh extension and no forced format).
  std::string binary(84, '\0');
  binary[80] = 1;
  binary += std::string(50, '\0');
  const fs::path stl_as_text = folder.write("scan.dat", binary);
  expect_input_error([&] { cylzone::read_points(stl_as_text); }, stl_as_text.string(), 0,
                     "looks like binary data; ");
}

TEST_CASE("read_points reads a delimited file written at test time", "[read][delimited]") {
  TemporaryFolder folder("read-delimited");
  const fs::path file = folder.write("levels.CSV", "x,y,z\r\n1,2,3\r\n4,5,6");
  const PointCloud cloud = cylzone::read_points(file);
  REQUIRE(cloud.size() == 2);
  CHECK(cloud.points.col(1) == Eigen::Vector3d(4, 5, 6));
  // A forced format overrides the extension.
  const fs::path named_ply = folder.write("really-text.ply", "1 2 3\n");
  ReadOptions as_text;
  as_text.format = cylzone::PointFileFormat::delimited_text;
  CHECK(cylzone::read_points(named_ply, as_text).size() == 1);
}

TEST_CASE("format_from_extension", "[read][delimited]") {
  using cylzone::PointFileFormat;
  CHECK(cylzone::format_from_extension("a/b/scan.ply") == PointFileFormat::ply);
  CHECK(cylzone::format_from_extension("SCAN.PLY") == PointFileFormat::ply);
  CHECK(cylzone::format_from_extension("part.obj") == PointFileFormat::obj);
  CHECK(cylzone::format_from_extension("part.Off") == PointFileFormat::off);
  CHECK(cylzone::format_from_extension("part.stl") == PointFileFormat::stl);
  CHECK(cylzone::format_from_extension("points.csv") == PointFileFormat::delimited_text);
  CHECK(cylzone::format_from_extension("points") == PointFileFormat::delimited_text);
  CHECK(cylzone::format_from_extension("ply") == PointFileFormat::delimited_text);
}

// ====================================================================== plain records and the rest

TEST_CASE("the line-feed count agrees with std::count at every length and alignment",
          "[read][delimited]") {
  // Reference: std::count over the same bytes (the computation count_line_feeds replaces).
  std::mt19937_64 rng(4099);
  std::uniform_int_distribution<int> byte(0, 255);
  std::string text(70000, ' ');
  for (char& c : text) c = byte(rng) < 64 ? '\n' : static_cast<char>(byte(rng));
  text.replace(20000, 9000, 9000, '\n');  // a run long enough to fill the byte counters (255 x 16)
  for (std::size_t start = 0; start < 17; ++start)
    for (const std::size_t length : {0, 1, 15, 16, 17, 31, 255 * 16, 255 * 16 + 1, 4093, 60001}) {
      const char* first = text.data() + start;
      CHECK(cylzone::detail::count_line_feeds(first, first + length) ==
            static_cast<std::size_t>(std::count(first, first + length, '\n')));
    }
  const std::string feeds(255 * 16 * 3 + 5, '\n');
  CHECK(cylzone::detail::count_line_feeds(feeds.data(), feeds.data() + feeds.size()) == feeds.size());
}

TEST_CASE("plain records among decorated lines: strtod's values and the right line numbers",
          "[read][delimited]") {
  // Plain records are read straight from the text; every other line (CRLF, blanks around fields,
  // comments, quotes, '+', long mantissas, blank and comment-only lines) through the content-line
  // path. Random mixes of both must give strtod's value of every field (C library, correctly
  // rounded; the reference the number tests use) and the file line of every point, and a bad
  // line anywhere must be reported with its own line number.
  std::mt19937_64 rng(31337);
  std::uniform_real_distribution<double> coordinate(-500.0, 500.0);
  std::uniform_int_distribution<int> pick(0, 11);
  std::uniform_int_distribution<int> precision(1, 17);
  for (int file = 0; file < 60; ++file) {
    const char separator = ",;\t "[file % 4];
    const bool ignored_column = file % 3 == 0;  // a fourth column that is not a coordinate
    std::string text = separator == ' ' ? "x y z" : std::string("x") + separator + "y" + separator + "z";
    if (ignored_column) text += separator == ' ' ? std::string(" label") : std::string(1, separator) + "label";
    text += "\n";
    std::size_t line_number = 1;
    std::vector<std::array<double, 3>> expected;
    std::vector<std::size_t> expected_lines;
    for (int row = 0; row < 400; ++row) {
      const int decoration = pick(rng);
      if (decoration == 0) {
        text += (row % 2 ? "# a comment\n" : "  \t \r\n");
        ++line_number;
        continue;
      }
      std::array<double, 3> values{};
      std::string line = decoration == 1 ? " \t" : "";
      for (int k = 0; k < 3; ++k) {
        std::string field = printf_text("%.*g", precision(rng), coordinate(rng));
        if (decoration == 2 && k == 1 && field[0] != '-') field = "+" + field;
        if (decoration == 3 && k == 2 && separator != ' ') field = "\"" + field + "\"";
        if (decoration == 4 && k == 0 && field.find('e') == std::string::npos)
          field += "00000000000000000000001";  // over 19 digits: from_chars' path
        values[static_cast<std::size_t>(k)] = strtod_reference(field[0] == '"' ? field.substr(1, field.size() - 2) : field);
        if (k > 0) line += separator;
        // (blanks inside tab-separated fields would make the tabs mere blanks)
        if (decoration == 5 && separator != ' ' && separator != '\t') line += ' ';
        line += field;
      }
      if (ignored_column) line += std::string(1, separator) + (decoration == 6 && separator != '\t' ? "a b" : "tag7");
      if (decoration == 7) line += "   # trailing note";
      if (decoration == 8) line += "\r";
      if (decoration == 9) line += " \t";
      if (separator == ' ' && ignored_column && decoration == 6) continue;  // "a b" would be 2 fields
      text += line + "\n";
      ++line_number;
      expected.push_back(values);
      expected_lines.push_back(line_number);
    }
    INFO("file " << file << " separator '" << separator << "'");
    const PointCloud cloud = parse(text);
    REQUIRE(cloud.size() == expected.size());
    REQUIRE(cloud.lines == expected_lines);
    for (std::size_t i = 0; i < expected.size(); ++i)
      for (int k = 0; k < 3; ++k)
        REQUIRE(bits(cloud.points(k, static_cast<Eigen::Index>(i))) == bits(expected[i][static_cast<std::size_t>(k)]));

    // One bad field on a random data line: that line is named, whatever path its neighbours took.
    const std::size_t victim = expected_lines[static_cast<std::size_t>(file * 7) % expected_lines.size()];
    std::size_t start = 0;
    for (std::size_t l = 1; l < victim; ++l) start = text.find('\n', start) + 1;
    std::string broken = text;
    std::string bad = std::string("1e999") + separator + "2" + separator + "3";
    if (ignored_column) bad += std::string(1, separator) + "tag";
    broken.replace(start, text.find('\n', start) - start, bad);
    expect_parse_error(broken, victim, "field 1");
  }
}
