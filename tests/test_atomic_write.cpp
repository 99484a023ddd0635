// Safe report writing (io/atomic_write.hpp). The behaviour checked here follows from POSIX
// semantics (POSIX.1-2017: rename() replaces the directory entry of the new name, whatever it
// is, so writing "over" a device node or FIFO by rename replaces the node; open() with O_EXCL
// fails when the name exists; kill(pid, 0) fails with ESRCH for a process that does not exist).
#include <catch2/catch.hpp>
#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "temporary_folder.hpp"

namespace fs = std::filesystem;
using namespace cylzone;
using cylzone::testing::TemporaryFolder;

namespace {

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

bool has_temporary_files(const fs::path& dir) {
  for (const auto& entry : fs::directory_iterator(dir)) {
    const std::string name = entry.path().filename().string();
    if (name.find("cylzone-tmp") != std::string::npos || name.find(".tmp-") != std::string::npos)
      return true;
  }
  return false;
}

/// The problem text of the InputError `f` throws; fails the test when it throws none.
template <class F>
std::string refusal(F&& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  FAIL("no InputError");
  return {};
}

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

}  // namespace

TEST_CASE("write_file_atomically replaces the target whole and leaves no temporary file") {
  TemporaryFolder dir("atomic");
  const fs::path target = dir.write("report.json", "old contents");
  write_file_atomically(target, "{\"new\": true}\n", {});
  CHECK(slurp(target) == "{\"new\": true}\n");
  CHECK_FALSE(has_temporary_files(dir.path()));
  // Reports are shared: readable by all, whatever the temporary file was created with.
  CHECK((fs::status(target).permissions() & fs::perms::others_read) != fs::perms::none);
}

TEST_CASE("write_file_atomically refuses to write over an input, also through another name") {
  TemporaryFolder dir("atomic");
  const fs::path input = dir.write("points.csv", "1,2,3\n");
  const fs::path alias = dir.path() / "alias.csv";
  fs::create_hard_link(input, alias);  // same file, different name: identity, not spelling
  for (const fs::path& target : {input, alias, dir.path() / "." / "points.csv"}) {
    try {
      write_file_atomically(target, "overwritten", {input});
      FAIL("no error for " << target);
    } catch (const InputError& e) {
      CHECK(contains(e.what(), "input"));
      CHECK(e.file() == target.string());
    }
  }
  CHECK(slurp(input) == "1,2,3\n");
  CHECK_FALSE(has_temporary_files(dir.path()));
}

TEST_CASE("write_file_atomically names a missing directory") {
  TemporaryFolder dir("atomic");
  const fs::path target = dir.path() / "missing" / "report.csv";
  const std::string message = refusal([&] { write_file_atomically(target, "x", {}); });
  CHECK(contains(message, "does not exist"));
  CHECK(contains(message, "missing"));
  CHECK_FALSE(fs::exists(target));
}

TEST_CASE("a FIFO, a device node and links to them are refused and left as they are") {
  TemporaryFolder dir("atomic");
  const fs::path fifo = dir.path() / "reader.json";
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  CHECK(contains(refusal([&] { write_file_atomically(fifo, "x", {}); }), "FIFO"));
  CHECK(fs::is_fifo(fs::symlink_status(fifo)));

  const fs::path to_fifo = dir.path() / "link-to-fifo.json";
  fs::create_symlink(fifo, to_fifo);
  CHECK(contains(refusal([&] { write_file_atomically(to_fifo, "x", {}); }), "a link to a FIFO"));
  CHECK(fs::is_symlink(fs::symlink_status(to_fifo)));

  // /dev/null: validation alone, so that even a mistake here could not replace it.
  REQUIRE(fs::is_character_file("/dev/null"));
  CHECK(contains(refusal([&] { validate_outputs({{"/dev/null", "--json"}}, {}); }), "a device"));
  const fs::path to_null = dir.path() / "null.json";
  fs::create_symlink("/dev/null", to_null);
  CHECK(contains(refusal([&] { write_file_atomically(to_null, "x", {}); }), "regular files only"));
  CHECK(fs::is_symlink(fs::symlink_status(to_null)));
  CHECK(fs::is_character_file("/dev/null"));

  const fs::path dangling = dir.path() / "dangling.json";
  fs::create_symlink(dir.path() / "nowhere", dangling);
  CHECK(contains(refusal([&] { write_file_atomically(dangling, "x", {}); }), "link to nothing"));
  CHECK_FALSE(has_temporary_files(dir.path()));
}

TEST_CASE("a link to a regular file is kept and the file it names is replaced") {
  TemporaryFolder dir("atomic");
  const fs::path real = dir.write("real.json", "old");
  const fs::path link = dir.path() / "link.json";
  fs::create_symlink(real, link);
  write_file_atomically(link, "new", {});
  CHECK(fs::is_symlink(fs::symlink_status(link)));
  CHECK(slurp(real) == "new");
  CHECK_FALSE(has_temporary_files(dir.path()));
}

TEST_CASE("two outputs naming one file, however spelled, are refused before anything is written") {
  TemporaryFolder dir("atomic");
  const fs::path a = dir.path() / "report.out";
  const fs::path link = dir.path() / "here";
  fs::create_directory_symlink(dir.path(), link);  // the folder under another name
  std::ostringstream out;
  for (const fs::path& other : {a, dir.path() / "." / "report.out", link / "report.out"}) {
    const std::string message = refusal([&] {
      write_outputs({{{a, "--json"}, "{}"}, {{other, "--csv"}, "x"}}, {}, out);
    });
    CHECK(contains(message, "same file"));
    CHECK(contains(message, "--json"));
    CHECK_FALSE(fs::exists(a));
  }
  // An existing file and a hard link to it: the same file by identity.
  dir.write("existing.out", "keep");
  fs::create_hard_link(dir.path() / "existing.out", dir.path() / "hard.out");
  CHECK(contains(refusal([&] {
          validate_outputs({{dir.path() / "existing.out", "--json"},
                            {dir.path() / "hard.out", "--csv"}},
                           {});
        }),
        "same file"));
  CHECK(slurp(dir.path() / "existing.out") == "keep");
}

TEST_CASE("the set commits together: when one file cannot be written, none is") {
  TemporaryFolder dir("atomic");
  const fs::path json = dir.write("report.json", "old json");
  // A name that passes validation (255 bytes at most, NAME_MAX on Linux) but whose temporary
  // name is too long: the second file fails after the first one's temporary was written.
  const fs::path csv = dir.path() / (std::string(240, 'c') + ".csv");
  validate_outputs({{json, "--json"}, {csv, "--csv"}}, {});
  std::ostringstream out;
  const std::string message = refusal([&] {
    write_outputs({{{json, "--json"}, "new json"}, {{csv, "--csv"}, "new csv"}}, {}, out);
  });
  CHECK(contains(message, "temporary"));
  CHECK(slurp(json) == "old json");
  CHECK_FALSE(fs::exists(csv));
  CHECK_FALSE(has_temporary_files(dir.path()));
}

TEST_CASE("'-' writes to the given stream, after the files; at most one output may use it") {
  TemporaryFolder dir("atomic");
  std::ostringstream out;
  write_outputs({{{"-", "--json"}, "{\"a\": 1}\n"}, {{dir.path() / "r.csv", "--csv"}, "x\n"}}, {},
                out);
  CHECK(out.str() == "{\"a\": 1}\n");
  CHECK(slurp(dir.path() / "r.csv") == "x\n");
  const std::string message =
      refusal([&] { validate_outputs({{"-", "--json"}, {"-", "--csv"}}, {}); });
  CHECK(contains(message, "standard output"));
  CHECK(contains(message, "--csv"));
}

TEST_CASE("stale temporaries of a process that is gone are removed, nothing else") {
  TemporaryFolder dir("atomic");
  // A process that has exited and been reaped no longer exists (kill gives ESRCH) until its id
  // is reused, which Linux does only after cycling through pid_max.
  const pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) ::_exit(0);
  REQUIRE(::waitpid(child, nullptr, 0) == child);
  const std::string name = "report.json";
  const fs::path stale = dir.write(temporary_name(name, child, 3), "half");
  const fs::path live = dir.write(temporary_name(name, ::getppid(), 0), "in progress");
  const fs::path other_target = dir.write(temporary_name("other.json", child, 0), "not ours");
  const fs::path lookalike = dir.write("." + name + ".cylzone-tmp-x-1", "not our naming");
  CHECK(remove_stale_temporaries(dir.path(), name) == 1);
  CHECK_FALSE(fs::exists(stale));
  CHECK(fs::exists(live));
  CHECK(fs::exists(other_target));
  CHECK(fs::exists(lookalike));

  // write_outputs cleans beside its targets before writing.
  const fs::path again = dir.write(temporary_name(name, child, 7), "half");
  std::ostringstream out;
  write_outputs({{{dir.path() / name, "--json"}, "{}"}}, {}, out);
  CHECK_FALSE(fs::exists(again));
  CHECK(slurp(dir.path() / name) == "{}");
  CHECK(temporary_name(name, 42, 1) == ".report.json.cylzone-tmp-42-1");
}
