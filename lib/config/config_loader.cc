#include "config/config_loader.h"

#include <yaml-cpp/eventhandler.h>
#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <boost/asio/ip/address.hpp>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <functional>
#include <limits>
#include <map>
#include <optional>
#include <sstream>
#include <system_error>
#include <utility>

#include "config/option_names.h"
#include "config/value_text.h"

namespace seston {
namespace {

constexpr std::uint64_t kMaxConfigBytes = 1 << 20;
constexpr int kMaxK = 256;
constexpr std::size_t kAnySize = std::numeric_limits<std::size_t>::max();
constexpr std::uint64_t kAnyCount = std::numeric_limits<std::uint64_t>::max();

struct Place {
  int line = 0;    // 1-based; 0 = nowhere in particular
  int column = 0;  // 1-based; 0 = unknown
};

Place PlaceOf(const YAML::Mark& mark) {
  if (mark.is_null()) return {};
  return {mark.line + 1, mark.column + 1};
}

// Where each YAML document of a text starts, from yaml-cpp's event parser. Needed
// because yaml-cpp 0.7's LoadAll never returns on a ',' outside a flow collection (a
// file holding just ",", or "- a\n,"): its parser yields an empty document at the same
// place again and again, filling memory. Found by tests/fuzz/config_loader_fuzzer.cc.
class DocumentStarts final : public YAML::EventHandler {
 public:
  void OnDocumentStart(const YAML::Mark& mark) override { marks.push_back(mark); }
  void OnDocumentEnd() override {}
  void OnNull(const YAML::Mark&, YAML::anchor_t) override {}
  void OnAlias(const YAML::Mark&, YAML::anchor_t) override {}
  void OnScalar(const YAML::Mark&, const std::string&, YAML::anchor_t,
                const std::string&) override {}
  void OnSequenceStart(const YAML::Mark&, const std::string&, YAML::anchor_t,
                       YAML::EmitterStyle::value) override {}
  void OnSequenceEnd() override {}
  void OnMapStart(const YAML::Mark&, const std::string&, YAML::anchor_t,
                  YAML::EmitterStyle::value) override {}
  void OnMapEnd() override {}

  std::vector<YAML::Mark> marks;
};

struct DocumentScan {
  std::vector<YAML::Mark> starts;  // one per document
  bool stuck = false;              // the parser stopped moving at starts.back()
};

// Throws YAML::Exception on a syntax error, as LoadAll would.
DocumentScan ScanDocuments(const std::string& text) {
  std::istringstream stream(text);
  YAML::Parser parser(stream);
  DocumentStarts handler;
  while (parser.HandleNextDocument(handler)) {
    const std::size_t count = handler.marks.size();
    if (count >= 2 && handler.marks[count - 1].pos == handler.marks[count - 2].pos) {
      handler.marks.pop_back();
      return {std::move(handler.marks), true};
    }
  }
  return {std::move(handler.marks), false};
}

// What a node holds, for the "got ..." part of a message.
std::string Found(const YAML::Node& node) {
  switch (node.Type()) {
    case YAML::NodeType::Null:
      return "nothing";
    case YAML::NodeType::Scalar:
      return QuotedText(node.Scalar());
    case YAML::NodeType::Sequence:
      return "a list";
    case YAML::NodeType::Map:
      return "a mapping";
    case YAML::NodeType::Undefined:
      break;
  }
  return "an undefined value";
}

// Levenshtein distance, for "did you mean" hints. Written here because neither the
// standard library nor Boost 1.74 offers one, and config keys are a few letters long.
std::size_t EditDistance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> previous(b.size() + 1);
  std::vector<std::size_t> current(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) previous[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitution});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

// The closest of `candidates` to `word` when it is close enough to be a misspelling
// (at most a third of the word's letters wrong, at least one allowed).
std::optional<std::string> ClosestSpelling(std::string_view word,
                                           const std::vector<std::string>& candidates) {
  const std::size_t allowed = std::max<std::size_t>(1, word.size() / 3);
  std::optional<std::string> best;
  std::size_t best_distance = allowed + 1;
  for (const std::string& candidate : candidates) {
    const std::size_t distance = EditDistance(word, candidate);
    if (distance < best_distance) {
      best_distance = distance;
      best = candidate;
    }
  }
  return best;
}

std::string Join(const std::vector<std::string>& words, std::string_view separator) {
  std::string joined;
  for (const std::string& word : words) {
    if (!joined.empty()) joined += separator;
    joined += word;
  }
  return joined;
}

std::vector<std::string> SplitWords(const std::string& joined) {
  std::vector<std::string> words;
  std::size_t start = 0;
  while (start <= joined.size()) {
    const std::size_t end = std::min(joined.find(" | ", start), joined.size());
    words.push_back(joined.substr(start, end - start));
    start = end + 3;
  }
  return words;
}

// Accepted values of a real-valued option.
struct Bounds {
  double min = -std::numeric_limits<double>::infinity();
  double max = std::numeric_limits<double>::infinity();
  bool min_open = false;
  bool max_open = false;

  bool Contains(double value) const {
    if (std::isnan(value)) return false;
    if (min_open ? value <= min : value < min) return false;
    if (max_open ? value >= max : value > max) return false;
    return true;
  }

  std::string Describe() const {
    const std::string low = (min_open ? "greater than " : "at least ") + NumberText(min);
    const std::string high = (max_open ? "less than " : "at most ") + NumberText(max);
    if (std::isinf(max)) return "a number " + low;
    if (!min_open && !max_open)
      return "a number from " + NumberText(min) + " to " + NumberText(max);
    return "a number " + low + " and " + high;
  }
};

Bounds AtLeast(double min) { return {.min = min}; }
Bounds Above(double min) { return {.min = min, .min_open = true}; }
Bounds FromTo(double min, double max) { return {.min = min, .max = max}; }
Bounds AboveUpTo(double min, double max) { return {.min = min, .max = max, .min_open = true}; }
Bounds Between(double min, double max) {
  return {.min = min, .max = max, .min_open = true, .max_open = true};
}

template <typename T>
std::string DescribeIntegers(T min, T max) {
  if (max == std::numeric_limits<T>::max()) {
    return min == 0 ? "a non-negative integer" : "an integer of at least " + std::to_string(min);
  }
  return "an integer from " + std::to_string(min) + " to " + std::to_string(max);
}

template <typename T>
std::optional<T> ParseInteger(std::string_view text) {
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  T value{};
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size() || text.empty()) return std::nullopt;
  return value;
}

std::optional<double> ParseNumber(std::string_view text) {
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  double value = 0;
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size() || text.empty()) return std::nullopt;
  return value;
}

template <typename T>
std::optional<T> IntegerIn(const YAML::Node& node) {
  if (!node.IsScalar()) return std::nullopt;
  return ParseInteger<T>(node.Scalar());
}

std::optional<double> NumberIn(const YAML::Node& node) {
  if (!node.IsScalar()) return std::nullopt;
  return ParseNumber(node.Scalar());
}

// Why `text` is not a usable HOST:PORT, or nullopt when it is.
std::optional<std::string> AddressFault(std::string_view text) {
  const std::size_t colon = text.rfind(':');
  if (colon == std::string_view::npos) return "it has no :PORT";
  const std::string_view host = text.substr(0, colon);
  const std::string_view port = text.substr(colon + 1);
  // An empty host (":7460") is 127.0.0.1 to ingest and api alike.
  const bool bracketed = !host.empty() && host.front() == '[';
  if (bracketed && (host.size() < 3 || host.back() != ']')) {
    return "an IPv6 host must be closed with ]";
  }
  if (!bracketed && host.find(':') != std::string_view::npos) {
    return "an IPv6 host must be written in brackets, e.g. [::1]:7460";
  }
  if (!host.empty()) {
    boost::system::error_code error;
    const boost::asio::ip::address address = boost::asio::ip::make_address(
        std::string(bracketed ? host.substr(1, host.size() - 2) : host), error);
    if (error || (bracketed && !address.is_v6())) {
      return "the host must be an IP address such as 127.0.0.1, 0.0.0.0 or [::1], not a name";
    }
  }
  const std::optional<int> port_number = ParseInteger<int>(port);
  if (port.empty() || port.front() == '+' || !port_number || *port_number < 1 ||
      *port_number > 65535) {
    return "the port must be a number from 1 to 65535";
  }
  return std::nullopt;
}

// Why `url` is not "http://HOST:PORT[/PATH]", or nullopt when it is. HOST may be a name.
std::optional<std::string> AlertmanagerUrlFault(std::string_view url) {
  constexpr std::string_view kScheme = "http://";
  if (!url.starts_with(kScheme)) return "it must start with http:// (https is not supported)";
  std::string_view authority = url.substr(kScheme.size());
  authority = authority.substr(0, authority.find('/'));
  const std::size_t colon = authority.rfind(':');
  if (colon == std::string_view::npos || colon == 0 || authority.back() == ']') {
    return "it needs a host and a :PORT";
  }
  const std::optional<int> port = ParseInteger<int>(authority.substr(colon + 1));
  if (!port || *port < 1 || *port > 65535) return "the port must be a number from 1 to 65535";
  return std::nullopt;
}

// Walks the YAML tree, filling a Config and collecting problems. One Reader reads one
// document; it never throws (yaml-cpp's accessors used here do not throw on the node
// kinds they are called for, and every conversion is done by hand).
class Reader {
 public:
  Reader(std::string file, std::filesystem::path base_directory)
      : file_(std::move(file)), base_directory_(std::move(base_directory)) {}

  void Read(const YAML::Node& root, Config& config);

  std::vector<ConfigProblem> TakeProblems() {
    std::stable_sort(problems_.begin(), problems_.end(),
                     [](const ConfigProblem& a, const ConfigProblem& b) {
                       const auto order = [](int line) {
                         return line == 0 ? std::numeric_limits<int>::max() : line;
                       };
                       return order(a.line) < order(b.line);
                     });
    return std::move(problems_);
  }

  void Problem(Place place, std::string key, std::string message) {
    problems_.push_back({file_, place.line, place.column, std::move(key), std::move(message)});
  }

 private:
  struct Entry {
    std::string key;  // dotted path
    YAML::Node value;
    Place place;  // of the value, or of the key when the value is empty
  };
  using ReadFunction = std::function<void(const Entry&)>;
  using Rules = std::vector<std::pair<std::string, ReadFunction>>;

  // Reads the entries of a mapping at `path` ("" for the top level) by `rules`.
  void ReadMapping(const YAML::Node& node, const std::string& path, Place place,
                   const Rules& rules);
  // A ReadFunction reading a nested section by its own rules.
  ReadFunction Section(Rules rules) {
    return [this, rules = std::move(rules)](const Entry& entry) {
      ReadMapping(entry.value, entry.key, entry.place, rules);
    };
  }

  // Where a key was seen, or its nearest enclosing section, or nowhere.
  Place PlaceOfKey(std::string key) const;
  void ProblemAtKey(const std::string& key, std::string message) {
    Problem(PlaceOfKey(key), key, std::move(message));
  }
  void Expected(const Entry& entry, const std::string& accepted, std::string_view note = {}) {
    std::string message = entry.key + " must be " + accepted + ", got " + Found(entry.value);
    if (!note.empty()) message += " (" + std::string(note) + ")";
    Problem(entry.place, entry.key, std::move(message));
  }

  bool Text(const Entry& entry, std::string& out, bool allow_empty);
  void Number(const Entry& entry, Bounds bounds, double& out);
  template <typename T>
  void Integer(const Entry& entry, T min, T max, T& out);
  void Boolean(const Entry& entry, bool& out);
  template <typename E>
  void Word(const Entry& entry, std::optional<E> (*from_word)(std::string_view),
            const std::string& words, E& out);
  void Address(const Entry& entry, bool allow_empty, std::string& out);
  void Delimiter(const Entry& entry, char& out);
  void ModelK(const Entry& entry, ModelOptions& model);
  void KRange(const Entry& entry, ModelOptions& model);
  void Features(const Entry& entry, FeatureOptions& features);
  void LogLevel(const Entry& entry, std::string& out);

  void ResolvePaths(Config& config) const;
  std::string Resolve(const std::string& path) const;
  void CheckAcrossKeys(const Config& config);

  std::string file_;
  std::filesystem::path base_directory_;
  std::vector<ConfigProblem> problems_;
  std::map<std::string, Place> places_;
};

Place Reader::PlaceOfKey(std::string key) const {
  while (true) {
    if (const auto found = places_.find(key); found != places_.end()) return found->second;
    const std::size_t cut = key.find_last_of(".[");
    if (cut == std::string::npos) return {};
    key.resize(cut);
  }
}

void Reader::ReadMapping(const YAML::Node& node, const std::string& path, Place place,
                         const Rules& rules) {
  std::vector<std::string> accepted;
  accepted.reserve(rules.size());
  for (const auto& rule : rules) accepted.push_back(rule.first);
  const std::string where = path.empty() ? "the top level" : path;

  if (node.IsNull()) return;  // an empty section keeps every default
  if (!node.IsMap()) {
    const std::string what = path.empty() ? "The config" : path;
    Problem(
        place, path,
        what + " must be a mapping with the keys " + Join(accepted, ", ") + ", got " + Found(node));
    return;
  }
  std::map<std::string, int> first_line;
  for (const auto& pair : node) {
    const YAML::Node key_node = pair.first;
    const Place key_place = PlaceOf(key_node.Mark());
    if (!key_node.IsScalar()) {
      Problem(key_place, path,
              "a key in " + where + " must be a plain word, got " + Found(key_node));
      continue;
    }
    const std::string& name = key_node.Scalar();
    const std::string key = path.empty() ? name : path + "." + name;
    if (const auto seen = first_line.find(name); seen != first_line.end()) {
      Problem(key_place, key,
              key + " appears twice; the first is on line " + std::to_string(seen->second) +
                  " (write each key once)");
      continue;
    }
    first_line.emplace(name, key_place.line);
    const auto rule = std::find_if(rules.begin(), rules.end(),
                                   [&](const auto& candidate) { return candidate.first == name; });
    if (rule == rules.end()) {
      std::string message = key + " is not a known key in " + where;
      if (const auto suggestion = ClosestSpelling(name, accepted)) {
        message += "; did you mean \"" + *suggestion + "\"?";
      }
      message += " Accepted keys: " + Join(accepted, ", ");
      Problem(key_place, key, std::move(message));
      continue;
    }
    const YAML::Node value = pair.second;
    const Place value_place =
        value.IsNull() || value.Mark().is_null() ? key_place : PlaceOf(value.Mark());
    places_[key] = key_place;
    rule->second(Entry{key, value, value_place});
  }
}

bool Reader::Text(const Entry& entry, std::string& out, bool allow_empty) {
  if (entry.value.IsNull() && allow_empty) {
    out.clear();
    return true;
  }
  if (!entry.value.IsScalar() || (!allow_empty && entry.value.Scalar().empty())) {
    Expected(entry, allow_empty ? "a text value" : "a non-empty text value");
    return false;
  }
  out = entry.value.Scalar();
  return true;
}

void Reader::Number(const Entry& entry, Bounds bounds, double& out) {
  const std::optional<double> value = NumberIn(entry.value);
  if (!value || !bounds.Contains(*value)) {
    Expected(entry, bounds.Describe());
    return;
  }
  out = *value;
}

template <typename T>
void Reader::Integer(const Entry& entry, T min, T max, T& out) {
  const std::optional<T> value = IntegerIn<T>(entry.value);
  if (!value || *value < min || *value > max) {
    Expected(entry, DescribeIntegers(min, max));
    return;
  }
  out = *value;
}

void Reader::Boolean(const Entry& entry, bool& out) {
  if (entry.value.IsScalar()) {
    const std::string& text = entry.value.Scalar();
    if (text == "true" || text == "True" || text == "TRUE") {
      out = true;
      return;
    }
    if (text == "false" || text == "False" || text == "FALSE") {
      out = false;
      return;
    }
  }
  Expected(entry, "true or false");
}

template <typename E>
void Reader::Word(const Entry& entry, std::optional<E> (*from_word)(std::string_view),
                  const std::string& words, E& out) {
  if (entry.value.IsScalar()) {
    if (const std::optional<E> value = from_word(entry.value.Scalar())) {
      out = *value;
      return;
    }
  }
  std::string note;
  if (entry.value.IsScalar()) {
    if (const auto suggestion = ClosestSpelling(entry.value.Scalar(), SplitWords(words))) {
      note = "did you mean \"" + *suggestion + "\"?";
    }
  }
  Expected(entry, "one of " + words, note);
}

void Reader::Address(const Entry& entry, bool allow_empty, std::string& out) {
  std::string text;
  if (!Text(entry, text, allow_empty)) return;
  if (text.empty()) {
    out.clear();
    return;
  }
  if (const std::optional<std::string> fault = AddressFault(text)) {
    Expected(entry,
             std::string("HOST:PORT with an IP address (or none, for 127.0.0.1) and a port from "
                         "1 to 65535, e.g. \"127.0.0.1:7460\", \"[::1]:7460\" or \":7460\"") +
                 (allow_empty ? ", or \"\" for off" : ""),
             *fault);
    return;
  }
  out = text;
}

void Reader::Delimiter(const Entry& entry, char& out) {
  if (entry.value.IsScalar() && entry.value.Scalar().size() == 1) {
    const char c = entry.value.Scalar().front();
    if (c != '"' && c != '\n' && c != '\r') {
      out = c;
      return;
    }
  }
  Expected(entry, "a single character other than a quote or line break, e.g. \",\" or \"\\t\"");
}

void Reader::ModelK(const Entry& entry, ModelOptions& model) {
  if (entry.value.IsScalar() && entry.value.Scalar() == "auto") {
    model.k = 0;
    return;
  }
  const std::optional<int> value = IntegerIn<int>(entry.value);
  if (!value || *value < 2 || *value > kMaxK) {
    Expected(entry, DescribeIntegers(2, kMaxK), "or auto, to choose k within model.k_range");
    return;
  }
  model.k = *value;
}

void Reader::KRange(const Entry& entry, ModelOptions& model) {
  const std::string accepted =
      "a list of two integers [k_min, k_max] with 1 <= k_min < k_max <= " + std::to_string(kMaxK) +
      ", e.g. [2, 12]";
  if (!entry.value.IsSequence() || entry.value.size() != 2) {
    Expected(entry, accepted);
    return;
  }
  const YAML::Node low = entry.value[0];
  const YAML::Node high = entry.value[1];
  const std::optional<int> k_min = IntegerIn<int>(low);
  const std::optional<int> k_max = IntegerIn<int>(high);
  if (!k_min || !k_max || *k_min < 1 || *k_max > kMaxK || *k_min >= *k_max) {
    Problem(entry.place, entry.key,
            entry.key + " must be " + accepted + ", got [" + Found(low) + ", " + Found(high) + "]");
    return;
  }
  model.k_min = *k_min;
  model.k_max = *k_max;
}

void Reader::Features(const Entry& entry, FeatureOptions& features) {
  const std::string example =
      "[ { column: area_um2, transform: log10 }, { column: aspect_ratio } ]";
  if (!entry.value.IsSequence()) {
    Expected(entry, "a list of features like " + example);
    return;
  }
  features.features.clear();
  for (std::size_t i = 0; i < entry.value.size(); ++i) {
    const YAML::Node element = entry.value[i];
    const std::string key = entry.key + "[" + std::to_string(i) + "]";
    const Place place = element.Mark().is_null() ? entry.place : PlaceOf(element.Mark());
    places_[key] = place;
    if (!element.IsMap()) {
      Problem(place, key,
              key + " must be a mapping like { column: area_um2, transform: log10 }, got " +
                  Found(element));
      continue;
    }
    FeatureSpec spec;
    bool has_column = false;
    ReadMapping(element, key, place,
                {{"column", [&](const Entry& e) { has_column = Text(e, spec.column, false); }},
                 {"transform", [&](const Entry& e) {
                    Word(e, &TransformFromWord, TransformWords(), spec.transform);
                  }}});
    if (!has_column) {
      if (places_.find(key + ".column") == places_.end()) {
        Problem(place, key + ".column", key + ".column is required: name the input column");
      }
      continue;
    }
    features.features.push_back(spec);
  }
  if (entry.value.size() == 0) {
    Problem(entry.place, entry.key, entry.key + " must list at least one feature, e.g. " + example);
  }
}

void Reader::LogLevel(const Entry& entry, std::string& out) {
  if (entry.value.IsScalar() && IsLogLevelWord(entry.value.Scalar())) {
    out = entry.value.Scalar();
    return;
  }
  Expected(entry, "one of " + LogLevelWords());
}

void Reader::Read(const YAML::Node& root, Config& config) {
  InputOptions& in = config.input;
  SocketOptions& socket = in.socket;
  ModelOptions& model = config.model;
  CountsOptions& counts = config.counts;
  DriftOptions& drift = config.drift;
  AlertOptions& alerts = config.alerts;
  StateOptions& state = config.state;
  ApiOptions& api = config.api;
  const auto text = [this](std::string& out, bool allow_empty) {
    return [this, &out, allow_empty](const Entry& e) { Text(e, out, allow_empty); };
  };
  const auto number = [this](double& out, Bounds bounds) {
    return [this, &out, bounds](const Entry& e) { Number(e, bounds, out); };
  };
  const auto size = [this](std::size_t& out, std::size_t min) {
    return [this, &out, min](const Entry& e) { Integer(e, min, kAnySize, out); };
  };
  const auto integer = [this](int& out, int min, int max) {
    return [this, &out, min, max](const Entry& e) { Integer(e, min, max, out); };
  };
  const auto boolean = [this](bool& out) {
    return [this, &out](const Entry& e) { Boolean(e, out); };
  };

  const Rules socket_rules = {
      {"listen", [&](const Entry& e) { Address(e, true, socket.listen); }},
      {"unix_path", text(socket.unix_path, true)},
      {"max_connections", size(socket.max_connections, 1)},
      {"max_queued_records", size(socket.max_queued_records, 1)},
      {"max_queued_bytes", size(socket.max_queued_bytes, 1)},
      {"max_pending_reply_bytes", size(socket.max_pending_reply_bytes, 1)},
      {"reply_linger_seconds", number(socket.reply_linger_seconds, AtLeast(0))},
  };
  const Rules input_rules = {
      {"time_column", text(in.time_column, false)},
      {"sample_column", text(in.sample_column, true)},
      {"volume_column", text(in.volume_column, true)},
      {"default_volume_ml", number(in.default_volume_ml, Above(0))},
      {"delimiter", [&](const Entry& e) { Delimiter(e, in.delimiter); }},
      {"drop_dir", text(in.drop_dir, false)},
      {"done_dir", text(in.done_dir, true)},
      {"quarantine_dir", text(in.quarantine_dir, true)},
      {"settle_seconds", number(in.settle_seconds, AtLeast(0))},
      {"rescan_seconds", number(in.rescan_seconds, Above(0))},
      {"watch", [&](const Entry& e) { Word(e, &WatchModeFromWord, WatchModeWords(), in.watch); }},
      {"file_suffix", text(in.file_suffix, true)},
      {"max_tracked_files", size(in.max_tracked_files, 1)},
      {"max_bad_row_fraction", number(in.max_bad_row_fraction, FromTo(0, 1))},
      {"max_line_bytes", size(in.max_line_bytes, 1)},
      {"max_file_bytes",
       [&](const Entry& e) { Integer<std::uint64_t>(e, 1, kAnyCount, in.max_file_bytes); }},
      {"socket", Section(socket_rules)},
  };
  const Rules model_rules = {
      {"k", [&](const Entry& e) { ModelK(e, model); }},
      {"k_range", [&](const Entry& e) { KRange(e, model); }},
      {"k_rule",
       [&](const Entry& e) {
         Word(e, &KSelectionRuleFromWord, KSelectionRuleWords(), model.k_rule);
       }},
      {"warmup_particles", size(model.warmup_particles, 1)},
      {"restarts", integer(model.restarts, 1, 1000)},
      {"max_iterations", integer(model.max_iterations, 1, 1000000)},
      {"batch_size", size(model.batch_size, 1)},
      {"half_life_particles", number(model.half_life_particles, AtLeast(0))},
      {"half_life_seconds", number(model.half_life_seconds, AtLeast(0))},
      {"novelty_quantile", number(model.novelty_quantile, AboveUpTo(0, 1))},
      {"novelty_buffer", size(model.novelty_buffer, 1)},
      {"seed", [&](const Entry& e) { Integer<std::uint64_t>(e, 0, kAnyCount, model.seed); }},
      {"silhouette_sample", size(model.silhouette_sample, 2)},
  };
  const Rules counts_rules = {
      {"bin_seconds", number(counts.bin_seconds, AboveUpTo(0, 86400))},
      {"output_dir", text(counts.output_dir, false)},
      {"retained_bins", size(counts.retained_bins, 1)},
      {"bin_close_lag_seconds", number(counts.bin_close_lag_seconds, AtLeast(0))},
      {"retained_samples", size(counts.retained_samples, 1)},
      {"open_count_files", size(counts.open_count_files, 2)},
  };
  const Rules composition_rules = {
      {"window_particles", size(drift.composition.window_particles, 1)},
      {"alpha", number(drift.composition.alpha, Between(0, 1))},
      {"warn_jsd", number(drift.composition.warn_jsd, AboveUpTo(0, 1))},
      {"alarm_jsd", number(drift.composition.alarm_jsd, AboveUpTo(0, 1))},
  };
  const Rules centre_rules = {
      {"warn_spreads", number(drift.centre.warn_spreads, Above(0))},
      {"alarm_spreads", number(drift.centre.alarm_spreads, Above(0))},
      {"common_fraction", number(drift.centre.common_fraction, AboveUpTo(0, 1))},
      {"same_direction_cosine", number(drift.centre.same_direction_cosine, FromTo(-1, 1))},
  };
  const Rules fit_rules = {
      {"delta", number(drift.fit.delta, AtLeast(0))},
      {"lambda", number(drift.fit.lambda, Above(0))},
      {"alpha", number(drift.fit.alpha, AboveUpTo(0, 1))},
      {"min_particles", size(drift.fit.min_particles, 1)},
  };
  const Rules novelty_rules = {
      {"window_particles", size(drift.novelty.window_particles, 1)},
      {"alpha", number(drift.novelty.alpha, Between(0, 1))},
      {"warn_ratio", number(drift.novelty.warn_ratio, Above(1))},
      {"alarm_ratio", number(drift.novelty.alarm_ratio, Above(1))},
      {"min_baseline_rate", number(drift.novelty.min_baseline_rate, FromTo(0, 1))},
      {"birth_min_particles", size(drift.novelty.birth_min_particles, 1)},
  };
  const Rules flow_rules = {
      {"baseline_samples", size(drift.flow.baseline_samples, 1)},
      {"window_samples", size(drift.flow.window_samples, 1)},
      {"warn_ratio", number(drift.flow.warn_ratio, Between(0, 1))},
      {"alarm_ratio", number(drift.flow.alarm_ratio, Between(0, 1))},
  };
  const Rules drift_rules = {
      {"enabled", boolean(drift.enabled)},
      {"evaluate_every_particles", size(drift.evaluate_every_particles, 1)},
      {"composition", Section(composition_rules)},
      {"centre", Section(centre_rules)},
      {"fit", Section(fit_rules)},
      {"novelty", Section(novelty_rules)},
      {"flow", Section(flow_rules)},
  };
  // Only the shape is checked here; the client (alerts/alertmanager_client.h) parses it.
  const auto alertmanager_url = [this](std::string& out) {
    return [this, &out](const Entry& e) {
      std::string url;
      if (!Text(e, url, true)) return;
      if (!url.empty() && AlertmanagerUrlFault(url)) {
        Expected(e, "\"\" (off) or a URL such as \"http://127.0.0.1:9093\"",
                 *AlertmanagerUrlFault(url));
        return;
      }
      out = url;
    };
  };
  const Rules alertmanager_rules = {
      {"url", alertmanager_url(alerts.alertmanager.url)},
      {"resend_seconds", number(alerts.alertmanager.resend_seconds, Above(0))},
      {"timeout_seconds", number(alerts.alertmanager.timeout_seconds, Above(0))},
      {"max_retry_seconds", number(alerts.alertmanager.max_retry_seconds, AtLeast(1))},
      {"max_pending_alerts", size(alerts.alertmanager.max_pending_alerts, 1)},
  };
  const Rules alerts_rules = {
      {"dir", text(alerts.dir, false)},
      {"raise_after", integer(alerts.raise_after, 1, 1000000)},
      {"resolve_after", integer(alerts.resolve_after, 1, 1000000)},
      {"cooldown_seconds", number(alerts.cooldown_seconds, AtLeast(0))},
      {"hook_command", text(alerts.hook_command, true)},
      {"hook_timeout_seconds", number(alerts.hook_timeout_seconds, Above(0))},
      {"recent_kept", size(alerts.recent_kept, 0)},
      {"alertmanager", Section(alertmanager_rules)},
  };
  const Rules state_rules = {
      {"dir", text(state.dir, false)},
      {"checkpoint_seconds", number(state.checkpoint_seconds, Above(0))},
      {"start_fresh_if_unreadable", boolean(state.start_fresh_if_unreadable)},
      {"max_checkpoint_bytes",
       [&](const Entry& e) {
         Integer<std::uint64_t>(e, 1, kAnyCount, state.max_checkpoint_bytes);
       }},
  };
  const Rules api_rules = {
      {"listen", [&](const Entry& e) { Address(e, false, api.listen); }},
      {"token_file", text(api.token_file, true)},
      {"max_body_bytes", size(api.max_body_bytes, 1)},
      {"max_header_bytes", size(api.max_header_bytes, 1)},
      {"max_connections", size(api.max_connections, 1)},
      {"request_timeout_seconds", number(api.request_timeout_seconds, Above(0))},
  };
  const Rules logging_rules = {
      {"level", [&](const Entry& e) { LogLevel(e, config.logging.level); }},
  };
  const Rules top_rules = {
      {"station", text(config.station, false)},
      {"input", Section(input_rules)},
      {"features", [&](const Entry& e) { Features(e, config.features); }},
      {"standardize", boolean(config.features.standardize)},
      {"model", Section(model_rules)},
      {"counts", Section(counts_rules)},
      {"drift", Section(drift_rules)},
      {"alerts", Section(alerts_rules)},
      {"state", Section(state_rules)},
      {"api", Section(api_rules)},
      {"logging", Section(logging_rules)},
  };
  ReadMapping(root, "", PlaceOf(root.Mark()), top_rules);
  ResolvePaths(config);
  CheckAcrossKeys(config);
}

std::string Reader::Resolve(const std::string& path) const {
  if (path.empty()) return path;
  return (base_directory_ / path).lexically_normal().string();
}

void Reader::ResolvePaths(Config& config) const {
  InputOptions& in = config.input;
  in.drop_dir = Resolve(in.drop_dir);
  const std::filesystem::path drop_dir(in.drop_dir);
  in.done_dir = in.done_dir.empty() ? (drop_dir / "done").string() : Resolve(in.done_dir);
  in.quarantine_dir =
      in.quarantine_dir.empty() ? (drop_dir / "quarantine").string() : Resolve(in.quarantine_dir);
  in.socket.unix_path = Resolve(in.socket.unix_path);
  config.counts.output_dir = Resolve(config.counts.output_dir);
  config.alerts.dir = Resolve(config.alerts.dir);
  config.state.dir = Resolve(config.state.dir);
  config.api.token_file = Resolve(config.api.token_file);
}

void Reader::CheckAcrossKeys(const Config& config) {
  const InputOptions& in = config.input;
  const ModelOptions& model = config.model;
  const DriftOptions& drift = config.drift;

  if (places_.find("features") == places_.end()) {
    Problem({}, "features",
            "features is required: list at least one feature, e.g. features: [ { column: "
            "area_um2, transform: log10 } ]");
  }
  std::map<std::string, std::size_t> first_use;
  const std::vector<std::pair<std::string, std::string>> reserved = {
      {"input.time_column", in.time_column},
      {"input.sample_column", in.sample_column},
      {"input.volume_column", in.volume_column}};
  for (std::size_t i = 0; i < config.features.features.size(); ++i) {
    const std::string& column = config.features.features[i].column;
    const std::string key = "features[" + std::to_string(i) + "].column";
    const auto [seen, inserted] = first_use.emplace(column, i);
    if (!inserted) {
      const std::string first = "features[" + std::to_string(seen->second) + "]";
      ProblemAtKey(key, key + " repeats " + QuotedText(column) + ", already used by " + first +
                            " on line " + std::to_string(PlaceOfKey(first).line) +
                            "; each column may be a feature once");
    }
    for (const auto& [reserved_key, reserved_column] : reserved) {
      if (!reserved_column.empty() && column == reserved_column) {
        ProblemAtKey(key, key + " " + QuotedText(column) + " is the column named by " +
                              reserved_key +
                              "; a feature must be a measured column, not the time, sample or "
                              "volume column");
      }
    }
  }

  const int needed = model.k == 0 ? model.k_max : model.k;
  if (model.warmup_particles < static_cast<std::size_t>(needed)) {
    const std::string what = model.k == 0 ? "the largest k in model.k_range" : "model.k";
    ProblemAtKey("model.warmup_particles", "model.warmup_particles must be at least " + what +
                                               " (" + std::to_string(needed) +
                                               ") so that every cluster can be seeded, got " +
                                               std::to_string(model.warmup_particles));
  }
  // A pair of thresholds in the wrong order: `key` (value) must not exceed `limit_key`.
  const auto not_above = [this](const std::string& key, double value, const std::string& limit_key,
                                double limit, const std::string& why = "") {
    if (value > limit) {
      ProblemAtKey(key, key + " (" + NumberText(value) + ") must not exceed " + limit_key + " (" +
                            NumberText(limit) + ")" + why);
    }
  };
  not_above("drift.composition.warn_jsd", drift.composition.warn_jsd, "drift.composition.alarm_jsd",
            drift.composition.alarm_jsd);
  not_above("drift.centre.warn_spreads", drift.centre.warn_spreads, "drift.centre.alarm_spreads",
            drift.centre.alarm_spreads);
  not_above("drift.novelty.warn_ratio", drift.novelty.warn_ratio, "drift.novelty.alarm_ratio",
            drift.novelty.alarm_ratio);
  not_above("drift.flow.alarm_ratio", drift.flow.alarm_ratio, "drift.flow.warn_ratio",
            drift.flow.warn_ratio, ": the alarm is the larger change in volume");
  if (drift.novelty.birth_min_particles > model.novelty_buffer) {
    ProblemAtKey(
        "drift.novelty.birth_min_particles",
        "drift.novelty.birth_min_particles (" + std::to_string(drift.novelty.birth_min_particles) +
            ") must not exceed model.novelty_buffer (" + std::to_string(model.novelty_buffer) +
            "): a new group must fit in the novelty buffer");
  }

  const std::vector<std::pair<std::string, std::string>> directories = {
      {"input.drop_dir", in.drop_dir},
      {"input.done_dir", in.done_dir},
      {"input.quarantine_dir", in.quarantine_dir}};
  for (std::size_t i = 0; i < directories.size(); ++i) {
    for (std::size_t j = i + 1; j < directories.size(); ++j) {
      if (directories[i].second == directories[j].second) {
        ProblemAtKey(directories[j].first, directories[j].first + " and " + directories[i].first +
                                               " are the same directory (" + directories[j].second +
                                               "); they must differ");
      }
    }
  }
  if (!in.socket.listen.empty() && in.socket.listen == config.api.listen) {
    ProblemAtKey("input.socket.listen", "input.socket.listen and api.listen are both " +
                                            QuotedText(in.socket.listen) +
                                            "; the record socket needs its own port");
  }
}

std::filesystem::path BaseDirectoryOf(const std::string& source_name) {
  std::error_code error;
  const std::filesystem::path absolute = source_name.empty()
                                             ? std::filesystem::current_path(error)
                                             : std::filesystem::absolute(source_name, error);
  return source_name.empty() ? absolute : absolute.parent_path();
}

std::string AbsoluteText(const std::filesystem::path& path) {
  std::error_code error;
  return std::filesystem::absolute(path, error).lexically_normal().string();
}

std::string JoinProblems(const std::vector<ConfigProblem>& problems) {
  std::string joined;
  for (const ConfigProblem& problem : problems) {
    if (!joined.empty()) joined += '\n';
    joined += problem.ToString();
  }
  return joined;
}

}  // namespace

std::string ConfigProblem::ToString() const {
  if (line <= 0) return file + ": " + message;
  return file + ":" + std::to_string(line) + ": " + message;
}

std::vector<ConfigProblem> CheckConfig(std::string_view yaml_text, const std::string& source_name,
                                       Config* config) {
  Config scratch;
  Config& target = config != nullptr ? *config : scratch;
  target.source_path = source_name;
  Reader reader(source_name, BaseDirectoryOf(source_name));
  try {
    const std::string text(yaml_text);
    const DocumentScan scan = ScanDocuments(text);
    if (scan.stuck) {
      reader.Problem(PlaceOf(scan.starts.back()), "",
                     "YAML syntax error: the parser cannot read on from here (a ',' "
                     "outside a [...] or {...} list?)");
      return reader.TakeProblems();
    }
    if (scan.starts.size() > 1) {
      reader.Problem(PlaceOf(scan.starts[1]), "",
                     "the file holds " + std::to_string(scan.starts.size()) +
                         " YAML documents; write one (remove the extra '---')");
    }
    reader.Read(scan.starts.empty() ? YAML::Node() : YAML::Load(text), target);
  } catch (const YAML::Exception& error) {
    reader.Problem(PlaceOf(error.mark), "", "YAML syntax error: " + error.msg);
  } catch (const std::exception& error) {
    reader.Problem({}, "", std::string("could not read the YAML: ") + error.what());
  }
  return reader.TakeProblems();
}

std::vector<ConfigProblem> CheckConfigFile(FileSystem& fs, const std::filesystem::path& path,
                                           Config* config) {
  Result<std::string> text = fs.ReadFile(path, kMaxConfigBytes);
  if (!text.ok()) {
    return {{path.string(), 0, 0, "",
             "cannot read the config file (" + text.status().ToString() +
                 "); expected a YAML file of at most 1 MiB"}};
  }
  std::vector<ConfigProblem> problems = CheckConfig(*text, path.string(), config);
  if (config != nullptr) config->source_path = AbsoluteText(path);
  return problems;
}

Result<Config> ParseConfig(std::string_view yaml_text, std::string source_name) {
  Config config;
  const std::vector<ConfigProblem> problems = CheckConfig(yaml_text, source_name, &config);
  if (!problems.empty()) return Status::InvalidArgument(JoinProblems(problems));
  return config;
}

Result<Config> LoadConfig(FileSystem& fs, const std::filesystem::path& path) {
  Result<std::string> text = fs.ReadFile(path, kMaxConfigBytes);
  if (!text.ok()) {
    return text.status().WithContext("cannot read config file " + path.string());
  }
  SESTON_ASSIGN_OR_RETURN(Config config, ParseConfig(*text, path.string()));
  config.source_path = AbsoluteText(path);
  return config;
}

Result<Config> LoadConfig(const std::filesystem::path& path) {
  return LoadConfig(PosixFileSystem::Instance(), path);
}

}  // namespace seston
