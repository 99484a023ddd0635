// A whole-part scan end to end: reading the cloud, segmenting it among the features
// (prepare/segment_scan.hpp) and evaluating the part (check_part), on an invented block with
// datum face A, datum bores B and C and 8 toleranced bores, scanned as one cloud in a placement
// of its own. Invented data for timing only.
//
//   bench_scan generate DIR [POINTS] [ply|csv]   writes DIR/scan.ply (binary little-endian,
//                                                float64 x y z) or DIR/scan.csv and DIR/plan.toml
//   bench_scan read DIR                          reads the cloud only (the reader's share)
//   bench_scan run DIR [--full] [--threads N] [--phases]    times the check of DIR/plan.toml: the
//                                                cloud read and hashed, segmented, every feature
//                                                evaluated; prints the phases and the peak
//                                                resident size (getrusage); --phases then
//                                                times each load step alone: load, SHA-256,
//                                                parse, bands, copy out (CPU ns per point)
//   bench_scan run DIR --breakdown               instead: the check once per profile, each in a
//                                                forked process of its own (wall, CPU and
//                                                peak resident size of each): lean, lean plus
//                                                one part of the full profile at a time, full;
//                                                the peak includes the loaded inputs
//   bench_scan run DIR --stages                  then times the evaluation stage by stage on
//                                                one thread, through the public stage
//                                                functions as evaluate_part calls them: the
//                                                datum frame, then each bore prepared and
//                                                evaluated in the frame (CPU ns per point, to
//                                                see which stage is not linear in points)
//
// Run `run` under /usr/bin/time -v for the maximum resident set size as the system reports it
// (bench/run_benchmarks.sh does). The default profile is the lean one (figures only: no
// ambiguity walks, no stray-point screen, no two-point sizes, no sensitivity study); --full
// runs the whole check. Raw coordinate size = 24 bytes per point.
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <Eigen/Geometry>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <memory>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "cylzone/check/part_check.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "cylzone/io/load.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/file_digest.hpp"  // the SHA-256 the load stage takes
#include "cylzone/plan/plan.hpp"

namespace fs = std::filesystem;

namespace {

constexpr double kPi = 3.14159265358979323846;

struct Bore {
  double x, y, diameter, depth;
};
// Datum B at the origin, C at (120, 0); 8 toleranced bores.
const Bore kB{0.0, 0.0, 20.0, 30.0};
const Bore kC{120.0, 0.0, 8.0, 20.0};
const Bore kBores[8] = {{25, 25, 10, 60}, {55, 25, 10, 60}, {85, 25, 12, 56}, {115, 25, 10, 60},
                        {25, 55, 12, 64}, {55, 55, 12, 56}, {85, 55, 10, 60}, {115, 55, 12, 50}};

/// Process CPU time (all threads), seconds: on a shared machine it varies much less than the
/// wall clock.
double cpu_seconds() { return static_cast<double>(std::clock()) / CLOCKS_PER_SEC; }

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

long peak_rss_kb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return usage.ru_maxrss;
}

int generate(const fs::path& dir, std::size_t n, bool ply) {
  fs::create_directories(dir);
  std::mt19937_64 rng(20261203);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> noise(0.0, 0.001);
  // The scanner's placement of the part: p_scan = R p_part + t.
  const Eigen::Matrix3d R =
      Eigen::AngleAxisd(0.83, Eigen::Vector3d(0.2, -0.4, 0.9).normalized()).toRotationMatrix();
  const Eigen::Vector3d t(312.4, -87.9, 455.2);
  std::vector<const Bore*> cylinders = {&kB, &kC};
  for (const Bore& b : kBores) cylinders.push_back(&b);
  // 30 % on face A, 65 % on the cylinders (by wall area), 5 % clutter (side faces).
  double area = 0.0;
  for (const Bore* b : cylinders) area += b->diameter * b->depth;
  const std::string path = (dir / (ply ? "scan.ply" : "scan.csv")).string();
  std::FILE* out = std::fopen(path.c_str(), "wb");
  if (!out) {
    std::perror(path.c_str());
    return 2;
  }
  if (ply)
    std::fprintf(out,
                 "ply\nformat binary_little_endian 1.0\nelement vertex %zu\nproperty double x\n"
                 "property double y\nproperty double z\nend_header\n",
                 n);
  else
    std::fprintf(out, "x,y,z\n");
  std::vector<double> buffer;
  buffer.reserve(3 * 65536);
  const auto flush = [&] {
    if (ply) {
      std::fwrite(buffer.data(), sizeof(double), buffer.size(), out);
    } else {
      for (std::size_t i = 0; i < buffer.size(); i += 3)
        std::fprintf(out, "%.6f,%.6f,%.6f\n", buffer[i], buffer[i + 1], buffer[i + 2]);
    }
    buffer.clear();
  };
  for (std::size_t i = 0; i < n; ++i) {
    const double pick = unit(rng);
    Eigen::Vector3d p;
    if (pick < 0.30) {
      // Face A, x in [-20, 140], y in [-20, 75], clear of the holes by 1 mm.
      while (true) {
        p = Eigen::Vector3d(-20 + 160 * unit(rng), -20 + 95 * unit(rng), noise(rng));
        bool clear = true;
        for (const Bore* b : cylinders)
          clear = clear && std::hypot(p.x() - b->x, p.y() - b->y) > b->diameter / 2 + 1.0;
        if (clear) break;
      }
    } else if (pick < 0.95) {
      double target = unit(rng) * area;
      const Bore* b = cylinders.back();
      for (const Bore* c : cylinders) {
        target -= c->diameter * c->depth;
        if (target <= 0) {
          b = c;
          break;
        }
      }
      const double phi = 2 * kPi * unit(rng);
      const double r = b->diameter / 2 + noise(rng);
      p = Eigen::Vector3d(b->x + r * std::cos(phi), b->y + r * std::sin(phi),
                          -1.0 - (b->depth - 2.0) * unit(rng));
    } else {
      p = Eigen::Vector3d(-30.0, -30 + 115 * unit(rng), -3 - 60 * unit(rng));  // a side face
    }
    const Eigen::Vector3d q = R * p + t;
    buffer.insert(buffer.end(), {q.x(), q.y(), q.z()});
    if (buffer.size() >= 3 * 65536) flush();
  }
  flush();
  std::fclose(out);

  // The plan: placement = the inverse of the scanner's placement.
  const Eigen::Matrix3d Ri = R.transpose();
  const Eigen::Vector3d ti = -Ri * t;
  std::ofstream plan(dir / "plan.toml");
  plan.precision(15);
  plan << "format = \"cylzone-plan-1\"\nname = \"bench block (invented)\"\nunits = \"mm\"\n\n"
       << "[scan]\npoints = \"" << (ply ? "scan.ply" : "scan.csv") << "\"\nband = 0.1\n"
       << "placement = [\n";
  for (int r = 0; r < 3; ++r)
    plan << "  [" << Ri(r, 0) << ", " << Ri(r, 1) << ", " << Ri(r, 2) << ", " << ti(r) << "],\n";
  plan << "  [0, 0, 0, 1],\n]\n\n"
       << "[datum.A]\nfeature = \"plane\"\nextent = { x = [-25, 145], y = [-25, 80] }\n\n"
       << "[datum.B]\nfeature = \"bore\"\nnominal_size = 20\ndepth = { top = 0, bottom = -30 }\n\n"
       << "[datum.C]\nfeature = \"bore\"\nbasic = [120, 0]\nnominal_size = 8\n"
       << "depth = { top = 0, bottom = -20 }\n";
  for (int k = 0; k < 8; ++k) {
    const Bore& b = kBores[k];
    plan << "\n[[bore]]\nid = \"H" << k + 1 << "\"\nbasic = [" << b.x << ", " << b.y << "]\n"
         << "size = { lower = " << b.diameter - 0.01 << ", upper = " << b.diameter + 0.01 << " }\n"
         << "depth = { top = 0, bottom = " << -b.depth << " }\n"
         << "position = { tolerance = 0.05, modifier = \"MMC\", datums = \"A|B|C\" }\n"
         << "perpendicularity = { tolerance = 0.03 }\n";
  }
  std::printf("wrote %s (%zu points, %.1f MB raw coordinates) and %s\n", path.c_str(), n,
              24.0 * static_cast<double>(n) / 1e6, (dir / "plan.toml").c_str());
  return 0;
}

/// The evaluation stage by stage on one thread, as evaluate_part runs it (the bench plan has no
/// probe compensation, so the datums' prepared points are the loaded ones): the datum frame,
/// then each bore taken into the frame, prepared and evaluated. CPU seconds and ns per point.
void time_stages(const cylzone::PartPlan& plan, const cylzone::PartInputs& inputs, bool full) {
  cylzone::BoreEvaluationOptions bore_options;
  bore_options.fit.threads = bore_options.stray_points.threads = 1;
  bore_options.fit.assess_ambiguity = bore_options.two_point_sizes = bore_options.stray_screen =
      full;
  std::printf("  evaluation stage by stage, one thread (profile %s)\n", full ? "full" : "lean");
  std::printf("  %-24s %9s %8s %10s\n", "stage", "points", "cpu s", "cpu ns/pt");
  const auto report = [](const std::string& name, double points, double cpu) {
    std::printf("  %-24s %9.0f %8.3f %10.1f\n", name.c_str(), points, cpu, 1e9 * cpu / points);
  };
  double cpu = cpu_seconds();
  std::vector<const Eigen::Matrix3Xd*> bore_points;
  for (const cylzone::PointCloud& c : inputs.bores) bore_points.push_back(&c.points);
  // A's least-squares plane fitted once, for the material side and the frame (as evaluate_part).
  const auto a_least_squares = std::make_shared<const cylzone::PlaneFit>(
      cylzone::fit_plane_least_squares(inputs.datums.front().points, bore_options.fit));
  const Eigen::Vector3d into = cylzone::infer_material_side(*a_least_squares, bore_points);
  std::vector<cylzone::DatumInput> datums;
  double datum_points = 0.0;
  for (std::size_t k = 0; k < plan.datums.size(); ++k) {
    datums.push_back({plan.datums[k], inputs.datums[k]});
    datum_points += static_cast<double>(inputs.datums[k].size());
  }
  cylzone::DatumFrameOptions frame_options;
  frame_options.fit = bore_options.fit;
  frame_options.stray_screen = full;
  frame_options.stray_points = bore_options.stray_points;
  frame_options.a_least_squares = a_least_squares;
  const cylzone::DatumFrameResult frame =
      cylzone::establish_datum_frame(datums, into, frame_options);
  report("datum frame", datum_points, cpu_seconds() - cpu);
  double all_cpu = 0.0, all_points = 0.0;
  for (std::size_t i = 0; i < plan.bores.size(); ++i) {
    cpu = cpu_seconds();
    cylzone::PointCloud in_frame;
    in_frame.points = frame.frame.points_to_frame(inputs.bores[i].points);
    const cylzone::PreparedFeature prepared = cylzone::prepare_feature(
        cylzone::FeatureKind::bore, std::move(in_frame),
        cylzone::bore_prepare_options(plan.bores[i], bore_options));
    (void)cylzone::evaluate_bore(cylzone::BoreInput{plan.bores[i], prepared}, bore_options);
    const double used = cpu_seconds() - cpu;
    const double points = static_cast<double>(inputs.bores[i].size());
    report("bore " + plan.bores[i].id, points, used);
    all_cpu += used;
    all_points += points;
  }
  report("bores together", all_points, all_cpu);
}

/// The check under one profile in a child process (fork): its wall, CPU and peak resident
/// size, the loaded inputs included, without the parent's later allocations. What each part of
/// the full profile costs is its row minus the lean row.
void time_profiles(const cylzone::PartPlan& plan, const cylzone::PartInputs& inputs,
                   std::size_t threads) {
  struct Profile {
    const char* name;
    bool ambiguity, stray, two_point, sensitivity;
  };
  const Profile profiles[] = {{"lean", false, false, false, false},
                              {"lean + ambiguity", true, false, false, false},
                              {"lean + stray screen", false, true, false, false},
                              {"lean + two-point sizes", false, false, true, false},
                              {"lean + association study", false, false, false, true},
                              {"full", true, true, true, true}};
  const double raw_mb = 24.0 * static_cast<double>(inputs.scan->points) / 1048576.0;
  std::printf("  check by profile, each in a process of its own (threads %zu)\n", threads);
  std::printf("  %-26s %8s %8s %9s %6s\n", "profile", "wall s", "cpu s", "peak MB", "x raw");
  for (const Profile& p : profiles) {
    std::fflush(stdout);
    const pid_t child = fork();
    if (child < 0) return;
    if (child == 0) {
      cylzone::CheckOptions options;
      options.sensitivity = p.sensitivity;
      options.evaluation.threads = threads;
      options.evaluation.profile.ambiguity = p.ambiguity;
      options.evaluation.profile.stray_screen = p.stray;
      options.evaluation.profile.two_point_sizes = p.two_point;
      rusage before{};
      getrusage(RUSAGE_SELF, &before);
      const auto start = std::chrono::steady_clock::now();
      (void)cylzone::check_part(plan, inputs, options);
      const double wall = seconds_since(start);
      rusage after{};
      getrusage(RUSAGE_SELF, &after);
      const auto cpu = [](const rusage& u) {
        return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
               1e-6 * static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
      };
      std::printf("  %-26s %8.3f %8.3f %9.1f %6.2f\n", p.name, wall, cpu(after) - cpu(before),
                  after.ru_maxrss / 1024.0, after.ru_maxrss / 1024.0 / raw_mb);
      std::fflush(stdout);
      _exit(0);
    }
    int status = 0;
    waitpid(child, &status, 0);
  }
}

int run(const fs::path& dir, bool full, std::size_t threads, bool phases, bool by_stage,
        bool breakdown) {
  const auto start = std::chrono::steady_clock::now();
  const double cpu_start = cpu_seconds();
  const cylzone::PartPlan plan = cylzone::read_plan(dir / "plan.toml");
  const cylzone::PartInputs inputs =
      cylzone::load_part_inputs(plan, cylzone::LoadOptions{threads});
  const double loaded = seconds_since(start);
  const double loaded_cpu = cpu_seconds() - cpu_start;
  const long loaded_peak_kb = peak_rss_kb();
  if (breakdown) {  // before anything else is allocated, which the children would inherit
    std::printf("# bench_scan: %zu points read and segmented in %.3f s wall, %.3f s cpu; peak "
                "resident %.1f MB\n",
                inputs.scan->points, loaded, loaded_cpu, loaded_peak_kb / 1024.0);
    time_profiles(plan, inputs, threads);
    return 0;
  }
  cylzone::CheckOptions options;
  options.sensitivity = full;
  options.evaluation.threads = threads;
  options.evaluation.profile.ambiguity = options.evaluation.profile.stray_screen =
      options.evaluation.profile.two_point_sizes = full;
  const auto eval_start = std::chrono::steady_clock::now();
  const double eval_cpu_start = cpu_seconds();
  const cylzone::PartCheckResult result = cylzone::check_part(plan, inputs, options);
  const double evaluated = seconds_since(eval_start);
  const double evaluated_cpu = cpu_seconds() - eval_cpu_start;
  const double total = seconds_since(start);
  const double total_cpu = cpu_seconds() - cpu_start;
  std::size_t taken = 0;
  for (const cylzone::FeatureSegmentation& f : inputs.scan->features) taken += f.points;
  std::printf("# bench_scan: %zu points, %zu taken by %zu features, %zu in no band; profile %s, "
              "threads %zu\n",
              inputs.scan->points, taken, inputs.scan->features.size(), inputs.scan->unassigned,
              full ? "full" : "lean", threads);
  std::printf("  %-24s %8s %8s\n", "phase", "wall s", "cpu s");
  std::printf("  read + hash + segment    %8.3f %8.3f\n  evaluate + decide        %8.3f %8.3f\n"
              "  end to end               %8.3f %8.3f\n  peak resident           %8.1f MB "
              "(raw coordinates %.1f MB, ratio %.2f)\n",
              loaded, loaded_cpu, evaluated, evaluated_cpu, total, total_cpu,
              peak_rss_kb() / 1024.0,
              24.0 * static_cast<double>(inputs.scan->points) / 1048576.0,
              (peak_rss_kb() / 1024.0) /
                  (24.0 * static_cast<double>(inputs.scan->points) / 1048576.0));
  std::printf("  peak resident after reading and segmenting: %.1f MB\n", loaded_peak_kb / 1024.0);
  std::printf("  part verdict: %s\n", std::string(cylzone::verdict_name(result.verdict)).c_str());
  if (by_stage) time_stages(plan, inputs, full);
  if (!phases) return 0;
  // The first phase broken down stage by stage, after the peak above was taken (the figures
  // above stay alive, so the process's peak grows: not for /usr/bin/time). Each stage on the
  // previous stage's output, as load_part_inputs runs them.
  const double n = static_cast<double>(inputs.scan->points);
  struct Stage {
    const char* name;
    double wall, cpu;
  };
  std::vector<Stage> stages;
  auto timed = [&](const char* name, auto&& step) {
    const auto wall = std::chrono::steady_clock::now();
    const double cpu = cpu_seconds();
    step();
    stages.push_back({name, seconds_since(wall), cpu_seconds() - cpu});
  };
  cylzone::LoadedFile loaded_file;
  std::string digest;
  cylzone::PointCloud cloud;
  cylzone::SegmentedScan segmented;
  timed("load (read the bytes)", [&] { loaded_file = cylzone::load(plan.scan->points); });
  timed("hash (SHA-256)", [&] { digest = cylzone::detail::sha256_of_bytes(loaded_file.bytes()); });
  timed("parse", [&] {
    cylzone::ReadOptions read;
    read.unit = plan.unit;
    cloud = cylzone::parse_points(loaded_file.bytes(), plan.scan->points.string(),
                                  cylzone::format_from_extension(plan.scan->points), read);
  });
  loaded_file = cylzone::LoadedFile();
  cylzone::SegmentationResult bands;
  timed("segment (bands only)", [&] {
    cylzone::SegmentOptions segment = plan.scan->segment;
    segment.threads = threads;
    bands = cylzone::segment_scan(cloud, plan.scan->placement, cylzone::scan_surfaces(plan),
                                  segment);
  });
  timed("split (copy out)", [&] { (void)cylzone::split_cloud(cloud, bands, threads); });
  timed("segment_part_scan",
        [&] { segmented = cylzone::segment_part_scan(plan, cloud, digest, threads); });
  std::printf("  load stage by stage (segment_part_scan = segment + split + records)\n");
  std::printf("  %-24s %8s %8s %10s\n", "stage", "wall s", "cpu s", "cpu ns/pt");
  for (const Stage& s : stages)
    std::printf("  %-24s %8.3f %8.3f %10.1f\n", s.name, s.wall, s.cpu, 1e9 * s.cpu / n);
  return segmented.clouds.empty() ? 1 : 0;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    if (argc >= 3 && std::strcmp(argv[1], "generate") == 0) {
      const std::size_t n = argc > 3 ? std::strtoull(argv[3], nullptr, 10) : 5000000;
      const bool ply = argc <= 4 || std::strcmp(argv[4], "csv") != 0;
      return generate(argv[2], n, ply);
    }
    if (argc >= 3 && std::strcmp(argv[1], "read") == 0) {
      // The reader alone, for its share of the peak resident size.
      const cylzone::PartPlan plan = cylzone::read_plan(fs::path(argv[2]) / "plan.toml");
      const auto start = std::chrono::steady_clock::now();
      const cylzone::PointCloud cloud = cylzone::read_points(plan.scan->points);
      std::printf("  read alone %.3f s, %zu points, peak resident %.1f MB\n", seconds_since(start),
                  cloud.size(), peak_rss_kb() / 1024.0);
      return 0;
    }
    if (argc >= 3 && std::strcmp(argv[1], "run") == 0) {
      bool full = false, phases = false, stages = false, breakdown = false;
      std::size_t threads = 1;
      for (int i = 3; i < argc; ++i) {
        if (std::strcmp(argv[i], "--full") == 0) full = true;
        if (std::strcmp(argv[i], "--phases") == 0) phases = true;
        if (std::strcmp(argv[i], "--stages") == 0) stages = true;
        if (std::strcmp(argv[i], "--breakdown") == 0) breakdown = true;
        if (std::strcmp(argv[i], "--threads") == 0 && i + 1 < argc)
          threads = std::strtoull(argv[++i], nullptr, 10);
      }
      return run(argv[2], full, threads, phases, stages, breakdown);
    }
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_scan: %s\n", e.what());
    return 2;
  }
  std::fprintf(stderr,
               "usage: bench_scan generate DIR [POINTS] [ply|csv] | bench_scan read DIR | "
               "bench_scan run DIR [--full] [--threads N] [--phases] [--stages] [--breakdown]\n");
  return 2;
}
