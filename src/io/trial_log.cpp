#include "io/trial_log.hpp"

#include <H5Cpp.h>
#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <stdexcept>

#include "core/base/errors.hpp"

namespace tessera {
namespace {

namespace fs = std::filesystem;

void string_attr(H5::H5Object& obj, const char* name, const std::string& value) {
  H5::StrType type(H5::PredType::C_S1, H5T_VARIABLE);
  type.setCset(H5T_CSET_UTF8);
  H5::Attribute a = obj.createAttribute(name, type, H5::DataSpace(H5S_SCALAR));
  a.write(type, value);
}

template <class T>
void scalar_attr(H5::H5Object& obj, const char* name, const H5::PredType& file_type,
                 const H5::PredType& memory_type, T value) {
  H5::Attribute a = obj.createAttribute(name, file_type, H5::DataSpace(H5S_SCALAR));
  a.write(memory_type, &value);
}

// A chunked dataset with an unlimited first dimension, so that zero rows is valid too.
template <class T>
void dataset(H5::Group& group, const char* name, const H5::PredType& file_type,
             const H5::PredType& memory_type, const std::vector<T>& data, hsize_t cols = 0) {
  const int rank = cols == 0 ? 1 : 2;
  const hsize_t rows = cols == 0 ? data.size() : data.size() / cols;
  const hsize_t dims[2] = {rows, cols};
  const hsize_t max_dims[2] = {H5S_UNLIMITED, cols};
  const hsize_t chunk[2] = {std::max<hsize_t>(rows, 1), std::max<hsize_t>(cols, 1)};
  H5::DSetCreatPropList props;
  props.setChunk(rank, chunk);
  H5::DataSet ds = group.createDataSet(name, file_type, H5::DataSpace(rank, dims, max_dims), props);
  if (rows > 0) ds.write(data.data(), memory_type);
}

void write_contents(H5::H5File& file, const TrialLog& log) {
  string_attr(file, "format", "tessera-trial-log");
  scalar_attr<std::int64_t>(file, "format_version", H5::PredType::STD_I64LE,
                            H5::PredType::NATIVE_INT64, 2);
  string_attr(file, "tool_version", TESSERA_VERSION);
  string_attr(file, "archive", log.archive);
  string_attr(file, "run_file", log.run_file);
  string_attr(file, "source", log.source);
  string_attr(file, "prior", log.prior);

  H5::Group g = file.createGroup("/trials");
  const auto f64 = [&](const char* name, double v) {
    scalar_attr(g, name, H5::PredType::IEEE_F64LE, H5::PredType::NATIVE_DOUBLE, v);
  };
  f64("kappa", log.kappa);
  f64("stop_gap", log.stop_gap);
  f64("good_enough", log.good_enough);
  f64("expected_best", log.expected_best);
  f64("expected_span", log.expected_span);
  f64("brute_force_best", log.brute_force_best);
  f64("length_scale", log.length_scale);
  f64("signal_variance", log.signal_variance);
  f64("noise", log.noise);
  scalar_attr(g, "max_trials", H5::PredType::STD_U64LE, H5::PredType::NATIVE_UINT64,
              log.max_trials);
  string_attr(g, "stop_reason", log.stop_reason);
  scalar_attr(g, "chosen", H5::PredType::STD_I64LE, H5::PredType::NATIVE_INT64, log.chosen);

  std::vector<std::int64_t> cell;
  std::vector<std::uint64_t> elite;
  std::vector<double> prior, predicted, sigma, measured, genome, descriptor, measured_descriptor;
  std::vector<std::uint8_t> valid;
  for (const TrialRecord& t : log.trials) {
    if (t.genome.size() != log.genome_size || t.descriptor.size() != log.descriptor_size ||
        t.measured_descriptor.size() != log.descriptor_size)
      throw std::invalid_argument("a trial record has arrays of the wrong length");
    cell.push_back(t.cell);
    elite.push_back(t.elite);
    prior.push_back(t.prior);
    predicted.push_back(t.predicted);
    sigma.push_back(t.sigma);
    measured.push_back(t.measured);
    valid.push_back(t.valid ? 1 : 0);
    genome.insert(genome.end(), t.genome.begin(), t.genome.end());
    descriptor.insert(descriptor.end(), t.descriptor.begin(), t.descriptor.end());
    measured_descriptor.insert(measured_descriptor.end(), t.measured_descriptor.begin(),
                               t.measured_descriptor.end());
  }
  const auto& F = H5::PredType::IEEE_F64LE;
  const auto& D = H5::PredType::NATIVE_DOUBLE;
  dataset(g, "cell", H5::PredType::STD_I64LE, H5::PredType::NATIVE_INT64, cell);
  dataset(g, "elite", H5::PredType::STD_U64LE, H5::PredType::NATIVE_UINT64, elite);
  dataset(g, "prior", F, D, prior);
  dataset(g, "predicted", F, D, predicted);
  dataset(g, "sigma", F, D, sigma);
  dataset(g, "measured", F, D, measured);
  dataset(g, "valid", H5::PredType::STD_U8LE, H5::PredType::NATIVE_UINT8, valid);
  dataset(g, "genome", F, D, genome, log.genome_size);
  dataset(g, "descriptor", F, D, descriptor, log.descriptor_size);
  dataset(g, "measured_descriptor", F, D, measured_descriptor, log.descriptor_size);
}

}  // namespace

namespace {

// Temporary files of writers that no longer run (killed mid-write) are removed, so a log
// written after a kill -9 leaves nothing behind.
void remove_dead_temporaries(const fs::path& folder, const std::string& prefix) {
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(folder, ec)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind(prefix, 0) != 0) continue;
    const std::string digits = name.substr(prefix.size());
    if (digits.empty() || digits.find_first_not_of("0123456789") != std::string::npos) continue;
    const long pid = std::strtol(digits.c_str(), nullptr, 10);
    if (pid > 0 && ::kill(static_cast<pid_t>(pid), 0) != 0 && errno == ESRCH)
      fs::remove(entry.path(), ec);
  }
}

}  // namespace

void write_trial_log(const std::string& path, const TrialLog& log) {
  const fs::path target(path);
  if (target.filename().empty())
    throw InputError(path + ": cannot write the trial log: not a file name");
  if (log.genome_size == 0 || log.descriptor_size == 0)
    throw std::invalid_argument("trial log without genome or descriptor size");
  const fs::path folder = target.has_parent_path() ? target.parent_path() : fs::path(".");
  const fs::path temp =
      folder / ("." + target.filename().string() + ".tmp-" + std::to_string(::getpid()));
  remove_dead_temporaries(folder, "." + target.filename().string() + ".tmp-");
  H5::Exception::dontPrint();
  try {
    const int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
    if (fd < 0)
      throw std::runtime_error(std::string("cannot create ") + temp.string() + ": " +
                               std::strerror(errno));
    ::close(fd);
    try {
      H5::FileAccPropList access;
      access.setFcloseDegree(H5F_CLOSE_STRONG);
      H5::H5File file(temp.string(), H5F_ACC_TRUNC, H5::FileCreatPropList::DEFAULT, access);
      write_contents(file, log);
      file.flush(H5F_SCOPE_GLOBAL);
      file.close();
    } catch (const H5::Exception& e) {
      throw std::runtime_error(e.getDetailMsg());
    }
    // Flush to disk before the rename: a log of robot trials is worth keeping through a crash.
    const int sync_fd = ::open(temp.c_str(), O_RDONLY | O_CLOEXEC);
    if (sync_fd >= 0) {
      ::fsync(sync_fd);
      ::close(sync_fd);
    }
    if (std::rename(temp.c_str(), target.c_str()) != 0)
      throw std::runtime_error("cannot rename " + temp.string() + ": " + std::strerror(errno));
  } catch (const std::exception& e) {
    std::error_code ignored;
    fs::remove(temp, ignored);
    throw InputError(path + ": cannot write the trial log: " + e.what());
  }
}

namespace {

std::string read_string_attr(const H5::H5Object& obj, const char* name) {
  H5::Attribute a = obj.openAttribute(name);
  H5::StrType type = a.getStrType();
  std::string value;
  a.read(type, value);
  return value;
}

template <class T>
T read_scalar_attr(const H5::H5Object& obj, const char* name, const H5::PredType& memory_type) {
  T value{};
  obj.openAttribute(name).read(memory_type, &value);
  return value;
}

template <class T>
std::vector<T> read_column(const H5::Group& g, const char* name, const H5::PredType& memory_type) {
  H5::DataSet ds = g.openDataSet(name);
  hsize_t dims[2] = {0, 0};
  ds.getSpace().getSimpleExtentDims(dims);
  std::vector<T> out(dims[0]);
  if (!out.empty()) ds.read(out.data(), memory_type);
  return out;
}

}  // namespace

std::optional<TrialLogSummary> read_trial_log_summary(const std::string& path) {
  H5::Exception::dontPrint();
  // Anything but a regular file (a named pipe would block the open) is the archive reader's to
  // explain.
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) return std::nullopt;
  std::optional<H5::H5File> file;
  try {
    if (!H5::H5File::isHdf5(path)) return std::nullopt;
    file.emplace(path, H5F_ACC_RDONLY);
    if (!file->attrExists("format") || read_string_attr(*file, "format") != "tessera-trial-log")
      return std::nullopt;
  } catch (const H5::Exception&) {
    return std::nullopt;  // not ours to explain: the archive reader says what is wrong
  }
  try {
    TrialLogSummary s;
    s.format_version =
        read_scalar_attr<std::int64_t>(*file, "format_version", H5::PredType::NATIVE_INT64);
    s.tool_version = read_string_attr(*file, "tool_version");
    s.archive = read_string_attr(*file, "archive");
    s.run_file = read_string_attr(*file, "run_file");
    s.source = read_string_attr(*file, "source");
    s.prior = read_string_attr(*file, "prior");
    const H5::Group g = file->openGroup("/trials");
    s.stop_reason = read_string_attr(g, "stop_reason");
    s.max_trials = read_scalar_attr<std::uint64_t>(g, "max_trials", H5::PredType::NATIVE_UINT64);
    s.chosen = read_scalar_attr<std::int64_t>(g, "chosen", H5::PredType::NATIVE_INT64);
    s.cell = read_column<std::int64_t>(g, "cell", H5::PredType::NATIVE_INT64);
    s.measured = read_column<double>(g, "measured", H5::PredType::NATIVE_DOUBLE);
    if (s.cell.size() != s.measured.size() ||
        (s.chosen >= 0 && static_cast<std::size_t>(s.chosen) >= s.measured.size()))
      throw InputError(path + ": trial log with inconsistent trial rows");
    return s;
  } catch (const H5::Exception& e) {
    throw InputError(
        path + ": a trial log of `tessera adapt --log` that cannot be read: " + e.getDetailMsg());
  }
}

}  // namespace tessera
