// InputError's message and quoted_for_message against their documented guarantees
// (errors.hpp): one line of printable ASCII -- the bytes 0x20..0x7E of US-ASCII (RFC 20; common
// practice) -- of at most message_limit bytes, naming file, line and key, whatever user text
// the parts hold. Hostile plans are written with TOML v1.0.0's own escapes in basic strings and
// quoted keys (\n, \u001B, \u0007), so the parser itself delivers the control characters.

#include <catch2/catch.hpp>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/plan/plan.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;
using Catch::Matchers::StartsWith;

namespace {

/// One line of printable ASCII within the documented bound.
void check_printable_line(const std::string& message) {
  INFO("message: " << message.substr(0, 600));
  CHECK(message.size() <= message_limit);
  for (const char ch : message) {
    const unsigned char c = static_cast<unsigned char>(ch);
    INFO("byte " << static_cast<int>(c));
    REQUIRE((c >= 0x20 && c <= 0x7e));
  }
}

const std::string kPlanHead = R"(format = "cylzone-plan-1"
name = "Block"
units = "mm"

[datum.A]
feature = "plane"
points = "a.csv"

[[bore]]
id = "P1"
points = "p1.csv"
basic = [10, 20]
)";

/// The InputError parse_plan throws for `text` (as `file`); fails the test if none.
InputError plan_error(const std::string& text, const std::string& file = "parts/block.toml") {
  try {
    (void)parse_plan(text, file, /*check_files=*/false);
  } catch (const InputError& e) {
    return e;
  }
  FAIL("the plan was accepted");
  return InputError("", 0, "");
}

}  // namespace

TEST_CASE("quoted_for_message escapes control and non-ASCII bytes and bounds the text",
          "[errors]") {
  CHECK(quoted_for_message("P1") == "\"P1\"");
  CHECK(quoted_for_message("a\nb") == "\"a\\nb\"");
  CHECK(quoted_for_message("tab\there\r") == "\"tab\\there\\r\"");
  CHECK(quoted_for_message("\x1b[31mred") == "\"\\x1b[31mred\"");
  CHECK(quoted_for_message("\x7f") == "\"\\x7f\"");
  // UTF-8 bytes (here U+00D8, C3 98) are outside printable ASCII: escaped byte by byte.
  CHECK(quoted_for_message("\xc3\x98" "12") == "\"\\xc3\\x9812\"");
  // The quote and the backslash are escaped, so the quoted text is unambiguous.
  CHECK(quoted_for_message("say \"hi\" \\o/") == "\"say \\\"hi\\\" \\\\o/\"");
  // An embedded NUL is a byte like any other.
  CHECK(quoted_for_message(std::string("a\0b", 3)) == "\"a\\x00b\"");

  // 1 MB of text: the first message_text_limit characters, "...", and the original length.
  const std::string big(1u << 20, 'k');
  const std::string quoted = quoted_for_message(big);
  CHECK(quoted == "\"" + std::string(message_text_limit, 'k') + "...\" (1048576 bytes)");
  // A cut never splits an escape: 30 ESC bytes (4 characters each) keep 20 whole escapes.
  const std::string escapes(30, '\x1b');
  std::string twenty;
  for (int i = 0; i < 20; ++i) twenty += "\\x1b";
  CHECK(quoted_for_message(escapes) == "\"" + twenty + "...\" (30 bytes)");
  CHECK(quoted_for_message(std::string(message_text_limit, 'x')).size() == message_text_limit + 2);
}

TEST_CASE("InputError::what() is one printable bounded line whatever its parts hold",
          "[errors]") {
  const InputError plain("plan.toml", 12, "the tolerance must not be negative", "bore[P1].x");
  CHECK(std::string(plain.what()) ==
        "plan.toml:12: key 'bore[P1].x': the tolerance must not be negative");

  const InputError hostile("dir\nname\x1b.toml", 7, "bad\r\nvalue\x07", "k\x1b[2Jey");
  const std::string what = hostile.what();
  check_printable_line(what);
  CHECK(what == "dir\\nname\\x1b.toml:7: key 'k\\x1b[2Jey': bad\\r\\nvalue\\x07");
  // The accessors keep the parts as given.
  CHECK(hostile.file() == "dir\nname\x1b.toml");
  CHECK(hostile.key() == "k\x1b[2Jey");

  const std::string huge(1u << 20, 'z');
  const InputError long_parts(huge, 3, huge, huge);
  const std::string long_what = long_parts.what();
  check_printable_line(long_what);
  CHECK_THAT(long_what, StartsWith("zzzz"));
  CHECK_THAT(long_what, Contains("...:3: key 'zzz"));
  CHECK_THAT(long_what, Contains("...': zzz"));
  CHECK(long_what.size() == message_limit);
}

TEST_CASE("hostile plans give one printable bounded line naming file, line and key",
          "[errors][plan]") {
  SECTION("an unknown key of 1 MB") {
    const std::string key(1u << 20, 'q');
    const InputError e = plan_error(kPlanHead + "cylindricity = 0.01\n" + key + " = 1\n");
    const std::string what = e.what();
    check_printable_line(what);
    CHECK_THAT(what, StartsWith("parts/block.toml:14: key 'bore[P1].\"qqqq"));
    CHECK_THAT(what, Contains("(1048576 bytes)"));
    CHECK_THAT(what, Contains("unknown key in a [[bore]]"));
    CHECK(e.line() == 14);
  }
  SECTION("a key with a newline and an ESC") {
    const InputError e = plan_error(kPlanHead + "cylindricity = 0.01\n\"a\\nb\\u001B[2J\" = 1\n");
    const std::string what = e.what();
    check_printable_line(what);
    CHECK(e.key() == "bore[P1].\"a\\nb\\x1b[2J\"");
    CHECK_THAT(what, StartsWith("parts/block.toml:14: key 'bore[P1].\"a\\nb\\x1b[2J\"': unknown key"));
  }
  SECTION("a value with control characters") {
    const std::string text = kPlanHead + "cylindricity = 0.01\naxis = \"gauss\\u0007\\r\\nfit\"\n";
    const InputError e = plan_error(text);
    const std::string what = e.what();
    check_printable_line(what);
    CHECK(e.line() == 14);
    CHECK(e.key() == "bore[P1].axis");
    CHECK_THAT(what, Contains("unknown axis \"gauss\\x07\\r\\nfit\""));
  }
  SECTION("a bore id with an ESC is quoted escaped") {
    const InputError e =
        plan_error(kPlanHead.substr(0, kPlanHead.find("id = \"P1\"")) +
                   "id = \"P\\u001B1\"\npoints = \"p1.csv\"\nbasic = [10, 20]\ncylindricity = 0.01\n");
    check_printable_line(e.what());
    CHECK(e.key() == "bore[1].id");
    CHECK_THAT(std::string(e.what()), Contains("(found \"P\\x1b1\")"));
  }
  SECTION("a dotted key 20000 tables deep") {
    std::string deep = "x";
    for (int i = 0; i < 20000; ++i) deep += ".x";
    const InputError e = plan_error("format = \"cylzone-plan-1\"\n" + deep + " = 1\n" +
                                    kPlanHead.substr(kPlanHead.find("name")) +
                                    "cylindricity = 0.01\n");
    check_printable_line(e.what());
    CHECK(e.line() == 2);
    CHECK(e.key() == "x");
    CHECK_THAT(e.problem(), Contains("unknown key at the top level"));
  }
  SECTION("a plan file name with a newline") {
    const InputError e = plan_error(kPlanHead + "cylindricity = -1\n", "odd\ndir/plan\x1b.toml");
    const std::string what = e.what();
    check_printable_line(what);
    CHECK_THAT(what, StartsWith("odd\\ndir/plan\\x1b.toml:13: key 'bore[P1].cylindricity': "));
  }
}
