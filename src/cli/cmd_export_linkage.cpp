// `tessera export-linkage ARCHIVE.h5 (--cell C | --nearest W,H) [--samples N] --out FILE.csv`:
// one elite of a linkage archive as CSV for CAD: the joint positions (ground pivots, crank pin,
// rocker pin, coupler point) over one crank revolution, in the run's length unit.
//
// The geometry is recomputed with plugins/linkage/linkage_model.hpp, the same header-only model
// the plugin evaluates with: the plugin ABI returns fitness and descriptors only, and putting
// linkage math into the public plugin header (include/tessera/) would make every plugin carry
// it. The model depends on the standard library only, so the CLI takes no dependency on the
// plugin's binary.
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <limits>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "io/archive_file.hpp"
#include "io/linkage_archive.hpp"
#include "io/table_output.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;
namespace lk = tessera::linkage;

struct ExportLinkageOptions {
  std::string archive;
  std::int64_t cell = -1;
  std::string nearest;
  std::size_t samples = 0;  // 0 = the run's sampling resolution
  std::string out;
  bool force = false;
};

// Row of the elite the user asked for.
std::size_t choose_elite(const ExportLinkageOptions& o, const ArchiveSnapshot& s) {
  if (s.elite_count() == 0) throw InputError(o.archive + ": the archive holds no elites");
  if (o.cell >= 0) {
    for (std::size_t i = 0; i < s.elite_count(); ++i)
      if (s.cell[i] == o.cell) return i;
    throw InputError(o.archive + ": cell " + std::to_string(o.cell) + " holds no elite (" +
                     std::to_string(s.elite_count()) + " of " + std::to_string(s.cell_count()) +
                     " cells are filled)");
  }
  const auto target = parse_number_list(o.nearest, "--nearest");
  if (target.size() != 2)
    throw InputError("--nearest: expected W,H (path width and height), got '" + o.nearest + "'");
  // Nearest in the (width, height) plane, in length units; ties go to the first row.
  std::size_t best = 0;
  double best_d2 = std::numeric_limits<double>::infinity();
  const std::size_t d = s.descriptor_size();
  for (std::size_t i = 0; i < s.elite_count(); ++i) {
    const double dw = s.descriptor[i * d] - target[0], dh = s.descriptor[i * d + 1] - target[1];
    const double d2 = dw * dw + dh * dh;
    if (d2 < best_d2) {
      best_d2 = d2;
      best = i;
    }
  }
  return best;
}

std::string csv_text(const ExportLinkageOptions& o, const ArchiveSnapshot& s, std::size_t row,
                     const lk::Options& options, const lk::Dimensions& m,
                     const std::vector<lk::Pose>& poses) {
  const std::string& u = options.units;
  const auto n = [](double v) { return exact_number(v); };
  std::ostringstream out;
  out << "# tessera export-linkage: four-bar crank-rocker, "
      << lk::to_string(options.settings.branch) << " branch; lengths in " << u
      << ", angles in degrees\n";
  out << "# archive " << o.archive << ", cell " << s.cell[row] << ", fitness " << n(s.fitness[row])
      << " (worst transmission angle as 90 - max|mu - 90|, degrees)\n";
  out << "# ground d = " << n(m.ground) << ", crank a = " << n(m.crank)
      << ", coupler b = " << n(m.coupler) << ", rocker c = " << n(m.rocker)
      << ", coupler point p = " << n(m.point_distance)
      << " from A at gamma = " << n(m.point_angle_deg) << " deg off A->B (" << u << ")\n";
  out << "# frame: O2 = (0, 0), O4 = (d, 0), x along the ground link; crank angle from +x, "
         "counter-clockwise\n";
  out << "# " << kLinkageCaution << "\n";
  out << "crank_angle_deg,o2_x_" << u << ",o2_y_" << u << ",o4_x_" << u << ",o4_y_" << u << ",a_x_"
      << u << ",a_y_" << u << ",b_x_" << u << ",b_y_" << u << ",p_x_" << u << ",p_y_" << u
      << ",transmission_angle_deg\n";
  for (const auto& p : poses) {
    out << n(p.crank_angle / lk::kRadPerDeg) << ",0,0," << n(m.ground) << ",0," << n(p.ax) << ","
        << n(p.ay) << "," << n(p.bx) << "," << n(p.by) << "," << n(p.px) << "," << n(p.py) << ","
        << n(p.transmission_angle_deg()) << "\n";
  }
  return out.str();
}

// Whole file under a temporary name, then renamed: a reader never sees half a file.
void write_whole(const std::string& path, const std::string& text) {
  const fs::path target(path);
  const fs::path temp = target.parent_path() /
                        ("." + target.filename().string() + ".tmp-" + std::to_string(::getpid()));
  {
    std::ofstream file(temp, std::ios::binary | std::ios::trunc);
    file << text;
    file.flush();
    if (!file) {
      std::error_code ec;
      fs::remove(temp, ec);
      throw InputError(path + ": cannot write the CSV file");
    }
  }
  std::error_code ec;
  fs::rename(temp, target, ec);
  if (ec) {
    fs::remove(temp, ec);
    throw InputError(path + ": cannot write the CSV file: " + ec.message());
  }
}

int run_export_linkage(const ExportLinkageOptions& o) {
  if ((o.cell >= 0) == !o.nearest.empty())
    throw InputError("export-linkage: give exactly one of --cell C and --nearest W,H");
  std::error_code ec;
  if (fs::exists(o.out, ec) && !o.force)
    throw InputError(o.out + ": already exists; pass --force to overwrite it");
  const fs::path parent = fs::path(o.out).parent_path();
  if (!parent.empty() && !fs::is_directory(parent, ec))
    throw InputError(o.out + ": folder " + parent.string() + " does not exist");

  const ArchiveSnapshot s = read_archive_file(o.archive);
  const lk::Options options = stored_linkage_options(s, o.archive);
  const std::size_t row = choose_elite(o, s);
  const lk::Dimensions m = elite_dimensions(s, row);
  const std::size_t samples = o.samples > 0 ? o.samples : options.settings.samples;
  const auto poses = lk::trace(m, options.settings.branch, samples);
  if (poses.empty())
    throw InputError(o.archive + ": the elite in cell " + std::to_string(s.cell[row]) +
                     " does not assemble over a full crank revolution");
  write_whole(o.out, csv_text(o, s, row, options, m, poses));

  const std::string& u = options.units;
  const std::size_t d = s.descriptor_size();
  std::cout << "export-linkage: cell " << s.cell[row] << ", path "
            << exact_number(s.descriptor[row * d]) << " x "
            << exact_number(s.descriptor[row * d + 1]) << " " << u << ", fitness "
            << exact_number(s.fitness[row]) << " deg\n";
  std::cout << "  ground " << exact_number(m.ground) << ", crank " << exact_number(m.crank)
            << ", coupler " << exact_number(m.coupler) << ", rocker " << exact_number(m.rocker)
            << ", coupler point " << exact_number(m.point_distance) << " at "
            << exact_number(m.point_angle_deg) << " deg (" << u << ", "
            << lk::to_string(options.settings.branch) << " branch)\n";
  std::cout << "  wrote " << o.out << ": " << samples << " crank angles, joint positions in " << u
            << "\n";
  std::cout << kLinkageCaution << "\n";
  return 0;
}

}  // namespace

void register_export_linkage(CLI::App& app) {
  auto o = std::make_shared<ExportLinkageOptions>();
  auto* cmd = app.add_subcommand(
      "export-linkage",
      "Write one elite of a linkage archive as CSV for CAD: ground pivots, crank pin, rocker pin\n"
      "and coupler point over one crank revolution, in the run's length unit, with a commented\n"
      "header. Choose the elite by cell or by the path size nearest to W,H.");
  cmd->add_option("ARCHIVE", o->archive, "linkage archive (.h5) written by tessera")->required();
  auto* cell = cmd->add_option("--cell", o->cell, "archive cell of the elite")
                   ->check(CLI::NonNegativeNumber);
  auto* nearest = cmd->add_option("--nearest", o->nearest,
                                  "W,H: the elite whose coupler path size is nearest to W x H");
  cell->excludes(nearest);
  cmd->add_option("--samples", o->samples,
                  "crank angles per revolution (default: the run's sampling resolution)")
      ->check(CLI::Range(std::size_t{4}, std::size_t{1000000}));
  cmd->add_option("--out,-o", o->out, "CSV file to write")->required();
  cmd->add_flag("--force", o->force, "overwrite an existing FILE");
  cmd->callback([o] { throw CLI::RuntimeError(run_export_linkage(*o)); });
}

}  // namespace tessera::cli
