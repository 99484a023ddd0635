#include "cylzone/core/errors.hpp"

#include <utility>

namespace cylzone {
namespace {
std::string compose(const std::string& file, std::size_t line, const std::string& key,
                    const std::string& problem) {
  std::string text = file.empty() ? std::string("<input>") : file;
  if (line > 0) text += ":" + std::to_string(line);
  text += ": ";
  if (!key.empty()) text += "key '" + key + "': ";
  return text + problem;
}
}  // namespace

InputError::InputError(std::string file, std::size_t line, std::string problem, std::string key)
    : std::runtime_error(compose(file, line, key, problem)),
      file_(std::move(file)),
      line_(line),
      key_(std::move(key)),
      problem_(std::move(problem)) {}

}  // namespace cylzone
