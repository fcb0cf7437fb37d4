#include "eval/worker_answer.hpp"

#include <cmath>

#include "eval/genome_digest.hpp"

namespace tessera {
namespace {

// Python's json module writes NaN, Infinity and -Infinity, which are not JSON. Rewrites them
// (outside strings) to null so that such an answer is reported as "not finite", not garbage.
bool rewrite_non_finite(std::string_view line, std::string& out) {
  bool changed = false;
  bool in_string = false;
  out.clear();
  std::size_t i = 0;
  while (i < line.size()) {
    const char c = line[i];
    if (in_string) {
      out += c;
      if (c == '\\' && i + 1 < line.size())
        out += line[++i];
      else if (c == '"')
        in_string = false;
      ++i;
      continue;
    }
    if (c == '"') in_string = true;
    bool matched = false;
    for (std::string_view token : {"-Infinity", "Infinity", "NaN"}) {
      if (line.substr(i, token.size()) == token) {
        out += "null";
        i += token.size();
        changed = matched = true;
        break;
      }
    }
    if (!matched) out += line[i++];
  }
  return changed;
}

}  // namespace

std::string one_line(std::string_view text, std::size_t limit) {
  std::string out;
  for (char c : text.substr(0, limit)) out += (static_cast<unsigned char>(c) < 0x20) ? ' ' : c;
  if (text.size() > limit) out += "...";
  return out;
}

// Built by appending: GCC 12 warns falsely on "'" + s.
std::string quoted(std::string_view text) {
  std::string out(1, '\'');
  out += one_line(text);
  out += '\'';
  return out;
}

WorkerLine read_worker_line(std::string_view line) {
  WorkerLine result;
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  result.text = line;
  if (line.find_first_not_of(" \t") == std::string_view::npos) return result;
  auto answer = nlohmann::json::parse(line, nullptr, false);
  if (answer.is_discarded()) {
    std::string rewritten;
    if (rewrite_non_finite(line, rewritten)) {
      answer = nlohmann::json::parse(rewritten, nullptr, false);
      result.non_finite_token = !answer.is_discarded();
    }
  }
  if (!answer.is_object() || !answer.contains("id") || !answer["id"].is_number_integer()) {
    result.kind = WorkerLine::Kind::malformed;
    return result;
  }
  result.kind = WorkerLine::Kind::answer;
  result.id = answer["id"].get<std::int64_t>();
  result.object = std::move(answer);
  return result;
}

std::optional<AnswerFault> read_evaluation(const WorkerLine& line, const double* genome,
                                           std::size_t genome_size, std::size_t descriptor_size,
                                           double& fitness, double* descriptor) {
  const nlohmann::json& answer = line.object;
  // Optional: the digest of the genome the worker evaluated; a mismatch means the answer
  // belongs to another request (ids swapped) and is not used.
  if (const auto digest = answer.find("digest"); digest != answer.end()) {
    if (!digest->is_string() || digest->get<std::string>() != genome_digest(genome, genome_size))
      return AnswerFault{"wrong genome digest", quoted(line.text)};
  }
  if (const auto error = answer.find("error"); error != answer.end())
    return AnswerFault{"worker error",
                       one_line(error->is_string() ? error->get<std::string>() : error->dump())};
  const auto fitness_entry = answer.find("fitness");
  const auto descriptor_entry = answer.find("descriptor");
  if (fitness_entry == answer.end() || descriptor_entry == answer.end() ||
      !descriptor_entry->is_array())
    return AnswerFault{"malformed answer", quoted(line.text)};
  if (descriptor_entry->size() != descriptor_size)
    return AnswerFault{"wrong descriptor length", std::to_string(descriptor_entry->size()) +
                                                      " numbers instead of " +
                                                      std::to_string(descriptor_size)};
  // null stands for a NaN or infinity the worker wrote in Python's non-JSON spelling.
  auto number = [&](const nlohmann::json& value, double& out) -> const char* {
    if (value.is_number()) {
      out = value.get<double>();
      return std::isfinite(out) ? nullptr : "not finite";
    }
    return (value.is_null() && line.non_finite_token) ? "not finite" : "malformed answer";
  };
  double fitness_value = 0.0;
  if (const char* fault = number(*fitness_entry, fitness_value))
    return AnswerFault{fault, quoted(line.text)};
  for (std::size_t j = 0; j < descriptor_size; ++j) {
    if (const char* fault = number((*descriptor_entry)[j], descriptor[j]))
      return AnswerFault{fault, quoted(line.text)};
  }
  fitness = fitness_value;
  return std::nullopt;
}

}  // namespace tessera
