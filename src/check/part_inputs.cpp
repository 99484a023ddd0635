// The load stage (part_inputs.hpp): the only part of a check that reads files.
#include "cylzone/check/part_inputs.hpp"

#include "cylzone/io/load.hpp"
#include "io/detail/file_digest.hpp"

namespace cylzone {
namespace {

/// Reads `file` once; the digest is of the very bytes parsed.
PointCloud load_and_record(const std::filesystem::path& file, const std::string& role,
                           const ReadOptions& read, std::vector<InputRecord>& records) {
  const LoadedFile loaded = load(file);
  PointCloud cloud = parse_points(loaded.bytes(), file.string(),
                                  read.format.value_or(format_from_extension(file)), read);
  records.push_back(
      {role, file, detail::sha256_of_bytes(loaded.bytes()), cloud.size(), cloud.lines});
  return cloud;
}

}  // namespace

PartInputs load_part_inputs(const PartPlan& plan) {
  PartInputs inputs;
  inputs.records.push_back({"plan", plan.file, plan.sha256, 0, {}});
  ReadOptions read;
  read.unit = plan.unit;
  for (const PlanDatum& datum : plan.datums)
    inputs.datums.push_back(load_and_record(datum.points, std::string("datum ") + datum.label,
                                            read, inputs.records));
  for (const PlanBore& bore : plan.bores)
    inputs.bores.push_back(load_and_record(bore.points, "bore " + bore.id, read, inputs.records));
  return inputs;
}

}  // namespace cylzone
