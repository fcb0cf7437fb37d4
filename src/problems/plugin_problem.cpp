#include "problems/plugin_problem.hpp"

#include <dlfcn.h>
#include <tessera/plugin.h>

#include <cmath>
#include <cstring>
#include <mutex>
#include <set>
#include <stdexcept>
#include <string_view>

#include "core/base/errors.hpp"

namespace tessera {
namespace {

using AbiVersionFn = std::uint32_t (*)();
using ProblemNameFn = const char* (*)();
using CreateFn = tsr_instance* (*)(const char*, char*, std::size_t);
using DescribeFn = void (*)(const tsr_instance*, tsr_metadata*);
using EvaluateFn = int (*)(tsr_instance*, std::size_t, const double*, double*, double*,
                           unsigned char*, double*, char*, std::size_t);
using DestroyFn = void (*)(tsr_instance*);
using SceneFn = int (*)(tsr_instance*, tsr_figure*, char*, std::size_t);
using TraceFn = int (*)(tsr_instance*, const double*, tsr_figure*, char*, std::size_t);

// Room for a plugin's error text; longer messages are cut by the plugin.
constexpr std::size_t kErrorSize = 1024;
// Sizes beyond this are garbage, not problems: refuse them before allocating.
constexpr std::size_t kMaxSize = std::size_t{1} << 28;

// Plugin text may hold anything: keep one printable line.
std::string one_line(std::string_view text) {
  std::string line(text);
  for (char& c : line)
    if (static_cast<unsigned char>(c) < 0x20) c = ' ';
  return line;
}

std::string buffer_text(char* buffer) {
  buffer[kErrorSize - 1] = '\0';
  return one_line(buffer);
}

bool valid_problem_name(std::string_view name) {
  if (name.empty()) return false;
  for (char c : name) {
    const bool ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
                    c == '-' || c == '_' || c == '.';
    if (!ok) return false;
  }
  return true;
}

// A loaded plugin file and its entry points. Shared by the problem and all its instances, so the
// code stays mapped while any instance lives.
class PluginLibrary {
 public:
  static std::shared_ptr<PluginLibrary> open(const std::string& path) {
    dlerror();
    void* handle = dlopen(path.c_str(), RTLD_NOW | RTLD_LOCAL);
    if (handle == nullptr) {
      std::string reason = one_line(dlerror());
      // dlerror() often starts with the path itself; say it once.
      if (reason.rfind(path + ": ", 0) == 0) reason.erase(0, path.size() + 2);
      throw InputError(path + ": cannot be loaded: " + reason);
    }
    auto library = std::shared_ptr<PluginLibrary>(new PluginLibrary(path, handle));
    library->bind();
    return library;
  }

  ~PluginLibrary() { dlclose(handle_); }
  PluginLibrary(const PluginLibrary&) = delete;
  PluginLibrary& operator=(const PluginLibrary&) = delete;

  const std::string& path() const { return path_; }
  const PluginHeader& header() const { return header_; }

  CreateFn create = nullptr;
  DescribeFn describe = nullptr;
  EvaluateFn evaluate = nullptr;
  DestroyFn destroy = nullptr;
  SceneFn scene = nullptr;  // optional, version 2
  TraceFn trace = nullptr;  // optional, version 2

 private:
  PluginLibrary(std::string path, void* handle) : path_(std::move(path)), handle_(handle) {}

  void* symbol(const char* name, std::string& missing) {
    void* address = dlsym(handle_, name);
    if (address == nullptr) missing += (missing.empty() ? "" : ", ") + std::string(name);
    return address;
  }

  // Resolves every symbol, then checks the ABI version before calling anything else: with
  // another version the other signatures cannot be trusted.
  void bind() {
    std::string missing;
    auto abi = reinterpret_cast<AbiVersionFn>(symbol("tsr_abi_version", missing));
    auto name = reinterpret_cast<ProblemNameFn>(symbol("tsr_problem_name", missing));
    create = reinterpret_cast<CreateFn>(symbol("tsr_create", missing));
    describe = reinterpret_cast<DescribeFn>(symbol("tsr_describe", missing));
    evaluate = reinterpret_cast<EvaluateFn>(symbol("tsr_evaluate", missing));
    destroy = reinterpret_cast<DestroyFn>(symbol("tsr_destroy", missing));
    if (!missing.empty())
      throw InputError(path_ + ": not a tessera plugin: missing symbol(s) " + missing);
    header_.abi_version = abi();
    if (header_.abi_version < TSR_ABI_VERSION_OLDEST || header_.abi_version > TSR_ABI_VERSION)
      throw InputError(path_ + ": plugin ABI version " + std::to_string(header_.abi_version) +
                       ", this tessera loads versions " + std::to_string(TSR_ABI_VERSION_OLDEST) +
                       " to " + std::to_string(TSR_ABI_VERSION) +
                       " (rebuild the plugin against this tessera's plugin.h)");
    // Version 1 plugins never export these names; a stray symbol of that name is not trusted.
    if (header_.abi_version >= 2) {
      scene = reinterpret_cast<SceneFn>(dlsym(handle_, "tsr_scene"));
      trace = reinterpret_cast<TraceFn>(dlsym(handle_, "tsr_trace"));
    }
    const char* problem = name();
    if (problem == nullptr || !valid_problem_name(problem))
      throw InputError(path_ +
                       ": tsr_problem_name() must return a name of letters, digits, "
                       "'-', '_' or '.'");
    header_.name = problem;
  }

  std::string path_;
  void* handle_;
  PluginHeader header_;
};

struct InstanceDeleter {
  std::shared_ptr<PluginLibrary> library;
  void operator()(tsr_instance* instance) const {
    if (instance != nullptr) library->destroy(instance);
  }
};
using InstanceHandle = std::unique_ptr<tsr_instance, InstanceDeleter>;

std::vector<double> copy_array(const double* data, std::size_t n) {
  return std::vector<double>(data, data + n);
}

std::vector<std::string> copy_names(const char* const* names, std::size_t n,
                                    const std::string& what) {
  if (n > 0 && names == nullptr) throw std::invalid_argument(what + " names are missing (null)");
  std::vector<std::string> out;
  std::set<std::string> seen;
  for (std::size_t i = 0; i < n; ++i) {
    if (names[i] == nullptr || *names[i] == '\0')
      throw std::invalid_argument(what + " name " + std::to_string(i) + " is empty");
    out.push_back(one_line(names[i]));
    if (!seen.insert(out.back()).second)
      throw std::invalid_argument(what + " name '" + out.back() + "' appears twice");
  }
  return out;
}

// Turns the plugin's description into a ProblemInfo, refusing anything inconsistent.
ProblemInfo read_metadata(const PluginLibrary& library, const tsr_instance* instance) {
  tsr_metadata m{};
  library.describe(instance, &m);
  const std::string& path = library.path();
  try {
    if (m.name == nullptr) throw std::invalid_argument("metadata without a problem name");
    if (library.header().name != m.name)
      throw std::invalid_argument("metadata names problem '" + one_line(m.name) +
                                  "' but tsr_problem_name() says '" + library.header().name + "'");
    if (m.genome_size == 0 || m.genome_size > kMaxSize)
      throw std::invalid_argument("genome size " + std::to_string(m.genome_size) +
                                  " is impossible");
    if (m.descriptor_size == 0 || m.descriptor_size > kMaxSize)
      throw std::invalid_argument("descriptor size " + std::to_string(m.descriptor_size) +
                                  " is impossible");
    if (m.extra_size > kMaxSize)
      throw std::invalid_argument("extra size " + std::to_string(m.extra_size) + " is impossible");
    if (m.genome_lower == nullptr || m.genome_upper == nullptr)
      throw std::invalid_argument("genome bounds are missing (null)");
    if (m.descriptor_lower == nullptr || m.descriptor_upper == nullptr)
      throw std::invalid_argument("descriptor bounds are missing (null)");
    ProblemInfo info;
    info.name = m.name;
    info.summary = m.summary == nullptr ? "" : one_line(m.summary);
    info.genome = {copy_array(m.genome_lower, m.genome_size),
                   copy_array(m.genome_upper, m.genome_size)};
    info.descriptor = {copy_array(m.descriptor_lower, m.descriptor_size),
                       copy_array(m.descriptor_upper, m.descriptor_size)};
    info.descriptor_names = copy_names(m.descriptor_names, m.descriptor_size, "descriptor");
    info.fitness_lower = m.fitness_lower;
    info.fitness_upper = m.fitness_upper;
    info.extra_names = copy_names(m.extra_names, m.extra_size, "extra");
    info.origin = path;
    info.abi_version = library.header().abi_version;
    info.draws_scene = library.scene != nullptr;
    info.gives_traces = library.trace != nullptr;
    check_problem_info(info);
    return info;
  } catch (const std::invalid_argument& e) {
    throw InputError(path + ": inconsistent metadata: " + e.what());
  }
}

// Converts a filled tsr_figure, checking every offset against the sizes the plugin stated.
Figure read_figure(const tsr_figure& f) {
  const auto text_at = [&](std::size_t offset) -> std::string {
    if (offset >= f.text_count) throw std::invalid_argument("a text offset is out of range");
    const char* start = f.text + offset;
    const void* end = std::memchr(start, '\0', f.text_count - offset);
    if (end == nullptr) throw std::invalid_argument("a text is not NUL-terminated");
    return one_line(std::string_view(start, static_cast<const char*>(end) - start));
  };
  Figure figure;
  for (std::size_t i = 0; i < f.item_count; ++i) {
    const tsr_item& raw = f.items[i];
    if (raw.kind < TSR_POLYLINE || raw.kind > TSR_NOTE || raw.style > TSR_STYLE_BODY)
      throw std::invalid_argument("item " + std::to_string(i) + " has an unknown kind or style");
    FigureItem item;
    item.kind = static_cast<FigureKind>(raw.kind - TSR_POLYLINE);
    item.style = static_cast<FigureStyle>(raw.style);
    item.closed = (raw.flags & TSR_FLAG_CLOSED) != 0;
    item.name = text_at(raw.name);
    const std::string text = text_at(raw.text);
    if (item.kind == FigureKind::note) {
      item.text = text;
    } else {
      for (std::size_t start = 0;;) {
        const std::size_t comma = text.find(',', start);
        item.columns.push_back(text.substr(start, comma - start));
        if (comma == std::string::npos) break;
        start = comma + 1;
      }
      if (raw.columns != item.columns.size())
        throw std::invalid_argument("item '" + item.name + "' names " +
                                    std::to_string(item.columns.size()) + " columns but has " +
                                    std::to_string(raw.columns));
      if (raw.rows > kMaxSize || raw.values > f.value_count ||
          raw.rows * raw.columns > f.value_count - raw.values)
        throw std::invalid_argument("item '" + item.name + "' reaches past the numbers");
      item.values.assign(f.values + raw.values, f.values + raw.values + raw.rows * raw.columns);
    }
    figure.items.push_back(std::move(item));
  }
  check_figure(figure);
  return figure;
}

class PluginInstance final : public ProblemInstance {
 public:
  PluginInstance(InstanceHandle handle, const ProblemInfo& info)
      : handle_(std::move(handle)),
        genome_size_(info.genome_size()),
        descriptor_size_(info.descriptor_size()),
        extra_size_(info.extra_names.size()),
        name_(info.name) {}

  void evaluate(Batch& batch, std::size_t first, std::size_t count) override {
    if (count == 0) return;
    if (first + count > batch.count || batch.genome_size != genome_size_ ||
        batch.descriptor_size != descriptor_size_ || batch.extra_size != extra_size_)
      throw std::invalid_argument("problem '" + name_ + "': batch shape does not match");
    char error[kErrorSize] = {};
    const PluginLibrary& library = *handle_.get_deleter().library;
    const int status = library.evaluate(
        handle_.get(), count, batch.genomes.data() + first * genome_size_,
        batch.fitness.data() + first, batch.descriptors.data() + first * descriptor_size_,
        batch.valid.data() + first,
        extra_size_ == 0 ? nullptr : batch.extras.data() + first * extra_size_, error, kErrorSize);
    if (status != TSR_OK) {
      std::string reason = buffer_text(error);
      if (reason.empty()) reason = "no reason given (status " + std::to_string(status) + ")";
      throw std::runtime_error(library.path() + ": problem '" + name_ +
                               "' failed to evaluate a batch: " + reason);
    }
  }

 private:
  InstanceHandle handle_;
  std::size_t genome_size_;
  std::size_t descriptor_size_;
  std::size_t extra_size_;
  std::string name_;
};

class PluginProblem final : public Problem {
 public:
  PluginProblem(std::shared_ptr<PluginLibrary> library, std::string options, InstanceHandle first,
                ProblemInfo info)
      : library_(std::move(library)),
        options_(std::move(options)),
        info_(std::move(info)),
        spare_(std::move(first)) {}

  const ProblemInfo& info() const override { return info_; }

  // The instance made while loading is handed out first, so an expensive set-up runs once less.
  std::unique_ptr<ProblemInstance> make_instance() const override {
    {
      std::lock_guard lock(mutex_);
      if (spare_) return std::make_unique<PluginInstance>(std::move(spare_), info_);
    }
    InstanceHandle handle = create_instance(library_, options_);
    tsr_metadata m{};
    library_->describe(handle.get(), &m);
    if (m.genome_size != info_.genome_size() || m.descriptor_size != info_.descriptor_size() ||
        m.extra_size != info_.extra_names.size())
      throw std::runtime_error(library_->path() +
                               ": a second instance describes different sizes than the first");
    return std::make_unique<PluginInstance>(std::move(handle), info_);
  }

  std::optional<Figure> scene() const override {
    if (library_->scene == nullptr) return std::nullopt;
    return draw("scene", [&](tsr_instance* instance, tsr_figure* f, char* error) {
      return library_->scene(instance, f, error, kErrorSize);
    });
  }

  std::optional<Figure> trace(const std::vector<double>& genome) const override {
    if (library_->trace == nullptr) return std::nullopt;
    if (genome.size() != info_.genome_size())
      throw std::invalid_argument("problem '" + info_.name + "': a genome of " +
                                  std::to_string(genome.size()) + " numbers, expected " +
                                  std::to_string(info_.genome_size()));
    return draw("trace", [&](tsr_instance* instance, tsr_figure* f, char* error) {
      return library_->trace(instance, genome.data(), f, error, kErrorSize);
    });
  }

  static InstanceHandle create_instance(const std::shared_ptr<PluginLibrary>& library,
                                        const std::string& options) {
    char error[kErrorSize] = {};
    tsr_instance* raw = library->create(options.c_str(), error, kErrorSize);
    if (raw == nullptr) {
      std::string reason = buffer_text(error);
      if (reason.empty()) reason = "no reason given";
      throw InputError(library->path() + ": problem '" + library->header().name +
                       "' rejected its options: " + reason);
    }
    return InstanceHandle(raw, InstanceDeleter{library});
  }

 private:
  // The two-call size protocol of tsr_figure on an instance of its own (figures are drawn
  // outside the evaluation loop, one at a time).
  template <class Call>
  Figure draw(const char* what, Call&& call) const {
    std::lock_guard lock(figure_mutex_);
    if (!figure_instance_) figure_instance_ = create_instance(library_, options_);
    const std::string where = library_->path() + ": problem '" + info_.name + "': " + what;
    std::vector<tsr_item> items;
    std::vector<double> values;
    std::vector<char> text;
    tsr_figure f{};
    for (int attempt = 0; attempt < 2; ++attempt) {
      items.resize(f.item_count);
      values.resize(f.value_count);
      text.resize(f.text_count);
      f = tsr_figure{items.data(), items.size(), 0, values.data(), values.size(), 0,
                     text.data(),  text.size(),  0};
      char error[kErrorSize] = {};
      const int status = call(figure_instance_.get(), &f, error);
      if (status == TSR_OK) {
        if (f.item_count > items.size() || f.value_count > values.size() ||
            f.text_count > text.size())
          throw std::runtime_error(where + ": the plugin wrote more than the buffers hold");
        try {
          return read_figure(f);
        } catch (const std::invalid_argument& e) {
          throw std::runtime_error(where + " is inconsistent: " + e.what());
        }
      }
      if (status != TSR_TOO_SMALL) {
        std::string reason = buffer_text(error);
        if (reason.empty()) reason = "no reason given (status " + std::to_string(status) + ")";
        throw std::runtime_error(where + " failed: " + reason);
      }
      if (f.item_count > kMaxSize || f.value_count > kMaxSize || f.text_count > kMaxSize)
        throw std::runtime_error(where + ": the plugin asks for impossible sizes");
    }
    throw std::runtime_error(where + ": the plugin asked for larger buffers twice");
  }

  std::shared_ptr<PluginLibrary> library_;
  std::string options_;
  ProblemInfo info_;
  mutable std::mutex mutex_;
  mutable InstanceHandle spare_;
  mutable std::mutex figure_mutex_;
  mutable InstanceHandle figure_instance_;
};

}  // namespace

PluginHeader inspect_plugin_file(const std::string& path) {
  return PluginLibrary::open(path)->header();
}

std::shared_ptr<Problem> load_plugin_problem(const std::string& path,
                                             const std::string& options_toml) {
  auto library = PluginLibrary::open(path);
  InstanceHandle first = PluginProblem::create_instance(library, options_toml);
  ProblemInfo info = read_metadata(*library, first.get());
  return std::make_shared<PluginProblem>(library, options_toml, std::move(first), std::move(info));
}

}  // namespace tessera
