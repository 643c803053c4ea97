#include "config/option_names.h"

#include <array>
#include <utility>

namespace seston {
namespace {

template <typename E, std::size_t N>
using WordTable = std::array<std::pair<E, std::string_view>, N>;

constexpr WordTable<Transform, 4> kTransformWords{{
    {Transform::kNone, "none"},
    {Transform::kLog10, "log10"},
    {Transform::kLn, "ln"},
    {Transform::kSqrt, "sqrt"},
}};

constexpr WordTable<WatchMode, 2> kWatchModeWords{{
    {WatchMode::kInotify, "inotify"},
    {WatchMode::kPoll, "poll"},
}};

constexpr WordTable<KSelectionRule, 2> kKSelectionRuleWords{{
    {KSelectionRule::kElbow, "elbow"},
    {KSelectionRule::kSilhouette, "silhouette"},
}};

constexpr std::array<std::string_view, 5> kLogLevelWords{"trace", "debug", "info", "warn", "error"};

template <typename E, std::size_t N>
std::string_view WordOf(const WordTable<E, N>& table, E value) {
  for (const auto& [entry, word] : table) {
    if (entry == value) return word;
  }
  return "unknown";
}

template <typename E, std::size_t N>
std::optional<E> ValueOf(const WordTable<E, N>& table, std::string_view word) {
  for (const auto& [entry, entry_word] : table) {
    if (entry_word == word) return entry;
  }
  return std::nullopt;
}

template <typename Range, typename Project>
std::string JoinWords(const Range& range, Project project) {
  std::string joined;
  for (const auto& entry : range) {
    if (!joined.empty()) joined += " | ";
    joined += project(entry);
  }
  return joined;
}

template <typename E, std::size_t N>
std::string JoinTable(const WordTable<E, N>& table) {
  return JoinWords(table, [](const auto& entry) { return std::string(entry.second); });
}

}  // namespace

std::string_view TransformWord(Transform transform) { return WordOf(kTransformWords, transform); }
std::optional<Transform> TransformFromWord(std::string_view word) {
  return ValueOf(kTransformWords, word);
}

std::string_view WatchModeWord(WatchMode mode) { return WordOf(kWatchModeWords, mode); }
std::optional<WatchMode> WatchModeFromWord(std::string_view word) {
  return ValueOf(kWatchModeWords, word);
}

std::string_view KSelectionRuleWord(KSelectionRule rule) {
  return WordOf(kKSelectionRuleWords, rule);
}
std::optional<KSelectionRule> KSelectionRuleFromWord(std::string_view word) {
  return ValueOf(kKSelectionRuleWords, word);
}

std::string TransformWords() { return JoinTable(kTransformWords); }
std::string WatchModeWords() { return JoinTable(kWatchModeWords); }
std::string KSelectionRuleWords() { return JoinTable(kKSelectionRuleWords); }

bool IsLogLevelWord(std::string_view word) {
  for (std::string_view level : kLogLevelWords) {
    if (level == word) return true;
  }
  return false;
}

std::string LogLevelWords() {
  return JoinWords(kLogLevelWords, [](std::string_view word) { return std::string(word); });
}

}  // namespace seston
