#include "api/router.h"

#include <charconv>
#include <cstdint>
#include <exception>
#include <map>
#include <optional>
#include <set>

#include "api/query_string.h"
#include "api/status_page.h"
#include "base/time_format.h"

namespace seston {
namespace {

using QueryParameters = std::map<std::string, std::string, std::less<>>;

constexpr std::string_view kJson = "application/json";
constexpr std::string_view kRetryAfterSeconds = "5";
constexpr std::string_view kChallenge = "Bearer realm=\"sestond\"";

// Dumps without throwing: text from elsewhere (a station name, an error message) may
// hold invalid UTF-8, which is replaced by U+FFFD rather than failing the request.
std::string Dump(const nlohmann::json& value) {
  return value.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace) + "\n";
}

HttpResponse JsonResponse(int status, const nlohmann::json& value) {
  return {status, std::string(kJson), Dump(value), {}};
}

int HttpStatusOf(StatusCode code) {
  switch (code) {
    case StatusCode::kOk:
      return 200;
    case StatusCode::kInvalidArgument:
    case StatusCode::kOutOfRange:
      return 400;
    case StatusCode::kNotFound:
      return 404;
    case StatusCode::kFailedPrecondition:
    case StatusCode::kUnavailable:
    case StatusCode::kResourceExhausted:
      return 503;
    default:
      return 500;
  }
}

HttpResponse StatusResponse(const Status& status) {
  HttpResponse response = ErrorResponse(HttpStatusOf(status.code()), status.message());
  if (response.status == 503) response.headers.emplace_back("Retry-After", kRetryAfterSeconds);
  return response;
}

// Compares in time that depends on the lengths only, never on where the first differing
// byte is, so that response timing does not reveal a prefix of the token. Hand-written:
// the Debian libraries we use offer no constant-time comparison short of OpenSSL.
bool ConstantTimeEquals(std::string_view expected, std::string_view presented) {
  std::size_t difference = expected.size() ^ presented.size();
  for (std::size_t i = 0; i < presented.size(); ++i) {
    unsigned char want = i < expected.size() ? static_cast<unsigned char>(expected[i]) : 0;
    difference |= static_cast<unsigned char>(want ^ static_cast<unsigned char>(presented[i]));
  }
  return difference == 0;
}

std::string ToLower(std::string_view text) {
  std::string lower(text);
  for (char& c : lower) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return lower;
}

// nullopt when the request may write; else the response refusing it.
std::optional<HttpResponse> CheckToken(const HttpRequest& request, const std::string& token) {
  if (token.empty()) {
    return ErrorResponse(403,
                         "writes are disabled: set api.token_file in the configuration to a "
                         "file holding a token and restart sestond");
  }
  auto unauthorized = [](std::string_view message, std::string_view error) {
    HttpResponse response = ErrorResponse(401, message);
    response.headers.emplace_back(
        "WWW-Authenticate", std::string(kChallenge) + ", error=\"" + std::string(error) + "\"");
    return response;
  };
  if (request.authorization.empty()) {
    HttpResponse response =
        ErrorResponse(401, "this request changes state and needs \"Authorization: Bearer TOKEN\"");
    response.headers.emplace_back("WWW-Authenticate", std::string(kChallenge));
    return response;
  }
  std::string_view header = request.authorization;
  std::size_t space = header.find(' ');
  if (space == std::string_view::npos || ToLower(header.substr(0, space)) != "bearer") {
    return unauthorized("the Authorization header must read \"Bearer TOKEN\"", "invalid_request");
  }
  std::string_view presented = header.substr(space);
  presented.remove_prefix(std::min(presented.find_first_not_of(' '), presented.size()));
  if (!ConstantTimeEquals(token, presented)) {
    return unauthorized("the bearer token does not match the one in api.token_file",
                        "invalid_token");
  }
  return std::nullopt;
}

// 400 naming every parameter outside `allowed`; nullopt when there is none.
std::optional<HttpResponse> CheckParameters(const QueryParameters& parameters,
                                            const std::set<std::string_view>& allowed) {
  std::string unknown;
  for (const auto& [name, value] : parameters) {
    if (allowed.contains(name)) continue;
    unknown += (unknown.empty() ? "\"" : ", \"") + name + "\"";
  }
  if (unknown.empty()) return std::nullopt;
  std::string accepted;
  for (std::string_view name : allowed) {
    accepted += (accepted.empty() ? "" : ", ") + std::string(name);
  }
  return ErrorResponse(400, "unknown query parameter " + unknown +
                                "; accepted here: " + (accepted.empty() ? "none" : accepted));
}

// The code point starting at text[i], advancing i past it; nullopt for invalid UTF-8
// (a bad lead or continuation byte, an overlong form, a surrogate, beyond U+10FFFF).
// Hand-written: the only Boost library that decodes UTF-8 (Locale) is a compiled one we
// do not otherwise need.
std::optional<std::uint32_t> NextCodePoint(std::string_view text, std::size_t& i) {
  auto lead = static_cast<unsigned char>(text[i]);
  std::size_t length = lead < 0x80             ? 1
                       : (lead & 0xE0) == 0xC0 ? 2
                       : (lead & 0xF0) == 0xE0 ? 3
                       : (lead & 0xF8) == 0xF0 ? 4
                                               : 0;
  if (length == 0 || i + length > text.size()) return std::nullopt;
  std::uint32_t code = length == 1 ? lead : lead & (0x7Fu >> length);
  for (std::size_t k = 1; k < length; ++k) {
    auto next = static_cast<unsigned char>(text[i + k]);
    if ((next & 0xC0) != 0x80) return std::nullopt;
    code = (code << 6) | (next & 0x3Fu);
  }
  constexpr std::uint32_t kSmallestOfLength[] = {0, 0, 0x80, 0x800, 0x10000};
  if (code < kSmallestOfLength[length] || code > 0x10FFFF || (code >= 0xD800 && code <= 0xDFFF)) {
    return std::nullopt;
  }
  i += length;
  return code;
}

// An empty string when `label` is acceptable, else what is wrong with it.
std::string LabelProblem(std::string_view label) {
  std::size_t characters = 0;
  for (std::size_t i = 0; i < label.size();) {
    std::optional<std::uint32_t> code = NextCodePoint(label, i);
    if (!code) return "label is not valid UTF-8 (at byte " + std::to_string(i) + ")";
    ++characters;
    bool control =
        *code < 0x20 || (*code >= 0x7F && *code <= 0x9F) || *code == 0x2028 || *code == 0x2029;
    if (control) {
      return "label must not contain control characters (character " + std::to_string(characters) +
             ")";
    }
  }
  if (characters == 0 || characters > kMaxLabelCharacters) {
    return "label must be 1 to " + std::to_string(kMaxLabelCharacters) + " characters, got " +
           std::to_string(characters);
  }
  if (label.front() == ' ' || label.back() == ' ') {
    return "label must not start or end with a space";
  }
  return "";
}

HttpResponse RootPage() {
  return {200, "text/html; charset=utf-8", std::string(StatusPageHtml()),
          {{"Cache-Control", "no-cache"}}};
}

HttpResponse Counts(const QueryParameters& parameters, ApiBackend& backend) {
  if (auto bad = CheckParameters(parameters, {"window", "from", "to"})) return *bad;
  std::optional<double> window, from, to;
  if (auto it = parameters.find("window"); it != parameters.end()) {
    Result<double> seconds = ParseDurationSeconds(it->second);
    if (!seconds.ok()) return ErrorResponse(400, "window: " + seconds.status().message());
    if (*seconds > kMaxCountWindowSeconds) {
      return ErrorResponse(400, "window \"" + it->second +
                                    "\" is longer than the 400 days "
                                    "a query may span");
    }
    window = *seconds;
  }
  for (auto [name, slot] : {std::pair{"from", &from}, std::pair{"to", &to}}) {
    auto it = parameters.find(name);
    if (it == parameters.end()) continue;
    *slot = ParseEventTime(it->second);
    if (!*slot) {
      return ErrorResponse(400, std::string(name) +
                                    " must be an ISO 8601 UTC time such as "
                                    "2026-12-02T03:04:05Z, or epoch seconds, got \"" +
                                    it->second + "\"");
    }
  }
  if (window && from) {
    return ErrorResponse(400,
                         "give either window or from, not both: window counts back "
                         "from to (or from the latest particle)");
  }
  if (from && to) {
    if (*from >= *to) return ErrorResponse(400, "from must be earlier than to");
    if (*to - *from > kMaxCountWindowSeconds) {
      return ErrorResponse(400, "from..to spans more than the 400 days a query may span");
    }
  }
  Result<CountsView> counts = backend.Counts(from, to, window);
  if (!counts.ok()) return StatusResponse(counts.status());
  return JsonResponse(200, ToJson(*counts));
}

// A whole number from `min` to `max` in `text`, or nullopt.
std::optional<long long> ParseWholeNumber(std::string_view text, long long min, long long max) {
  long long value = 0;
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (error != std::errc() || end != text.data() + text.size() || value < min || value > max) {
    return std::nullopt;
  }
  return value;
}

HttpResponse Series(const QueryParameters& parameters, ApiBackend& backend) {
  if (auto bad = CheckParameters(parameters, {"step", "steps", "to"})) return *bad;
  double step = 3600;
  long long steps = 24;
  std::optional<double> to;
  if (auto it = parameters.find("step"); it != parameters.end()) {
    Result<double> seconds = ParseDurationSeconds(it->second);
    if (!seconds.ok()) return ErrorResponse(400, "step: " + seconds.status().message());
    step = *seconds;
  }
  if (auto it = parameters.find("steps"); it != parameters.end()) {
    std::optional<long long> parsed = ParseWholeNumber(it->second, 1, kMaxSeriesSteps);
    if (!parsed) {
      return ErrorResponse(400, "steps must be a whole number from 1 to " +
                                    std::to_string(kMaxSeriesSteps) + ", got \"" + it->second +
                                    "\"");
    }
    steps = *parsed;
  }
  if (auto it = parameters.find("to"); it != parameters.end()) {
    to = ParseEventTime(it->second);
    if (!to) {
      return ErrorResponse(400, "to must be an ISO 8601 UTC time such as 2026-12-02T03:04:05Z, "
                                "or epoch seconds, got \"" + it->second + "\"");
    }
  }
  if (step * static_cast<double>(steps) > kMaxCountWindowSeconds) {
    return ErrorResponse(400, "step x steps spans more than the 400 days a query may span");
  }
  Result<SeriesView> series = backend.Series(to, step, static_cast<int>(steps));
  if (!series.ok()) return StatusResponse(series.status());
  return JsonResponse(200, ToJson(*series));
}

HttpResponse RecentParticles(const QueryParameters& parameters, ApiBackend& backend) {
  if (auto bad = CheckParameters(parameters, {"limit"})) return *bad;
  constexpr std::size_t kDefaultLimit = 2000;
  std::size_t limit = kDefaultLimit;
  if (auto it = parameters.find("limit"); it != parameters.end()) {
    std::optional<long long> parsed =
        ParseWholeNumber(it->second, 1, static_cast<long long>(kMaxRecentParticles));
    if (!parsed) {
      return ErrorResponse(400, "limit must be a whole number from 1 to " +
                                    std::to_string(kMaxRecentParticles) + ", got \"" +
                                    it->second + "\"");
    }
    limit = static_cast<std::size_t>(*parsed);
  }
  return JsonResponse(200, ToJson(backend.RecentParticles(limit)));
}

HttpResponse SetLabel(std::uint32_t id, const HttpRequest& request, ApiBackend& backend) {
  nlohmann::json body = nlohmann::json::parse(request.body, nullptr, /*allow_exceptions=*/false);
  if (!body.is_object() || !body.contains("label") || !body["label"].is_string() ||
      body.size() != 1) {
    return ErrorResponse(400,
                         "the body must be a JSON object {\"label\": \"NAME\"} and "
                         "nothing else");
  }
  std::string label = body["label"].get<std::string>();
  if (std::string problem = LabelProblem(label); !problem.empty()) {
    return ErrorResponse(400, problem);
  }
  Status status = backend.SetLabel(id, label);
  if (!status.ok()) return StatusResponse(status);
  return JsonResponse(200, {{"id", id}, {"label", label}});
}

HttpResponse AcceptBaseline(ApiBackend& backend) {
  Status status = backend.AcceptBaseline();
  if (!status.ok()) return StatusResponse(status);
  return JsonResponse(200, {{"baseline", "accepted"}});
}

// "/v1/clusters/17/label" -> the id text "17"; nullopt for any other path.
std::optional<std::string_view> LabelPathId(std::string_view path) {
  constexpr std::string_view kPrefix = "/v1/clusters/";
  constexpr std::string_view kSuffix = "/label";
  if (!path.starts_with(kPrefix) || !path.ends_with(kSuffix) ||
      path.size() <= kPrefix.size() + kSuffix.size()) {
    return std::nullopt;
  }
  return path.substr(kPrefix.size(), path.size() - kPrefix.size() - kSuffix.size());
}

HttpResponse RouteOrThrow(const HttpRequest& request, ApiBackend& backend,
                          const std::string& token) {
  std::string_view target = request.target;
  std::size_t question = target.find('?');
  std::string_view path = target.substr(0, question);
  std::string_view query =
      question == std::string_view::npos ? std::string_view() : target.substr(question + 1);

  // Which methods the path takes; the handler runs once method and parameters pass.
  std::string_view allow;
  bool write = false;
  std::optional<std::string_view> label_id = LabelPathId(path);
  if (path == "/" || path == "/v1/health" || path == "/v1/counts" || path == "/v1/clusters" ||
      path == "/v1/alerts" || path == "/metrics" || path == "/v1/series" ||
      path == "/v1/particles/recent") {
    allow = "GET";
  } else if (label_id) {
    allow = "PUT";
    write = true;
  } else if (path == "/v1/baseline") {
    allow = "POST";
    write = true;
  } else {
    constexpr std::size_t kEchoedPathBytes = 200;
    return ErrorResponse(404, "no endpoint at \"" + std::string(path.substr(0, kEchoedPathBytes)) +
                                  "\"; see GET /v1/health, /v1/counts, /v1/series, "
                                  "/v1/clusters, /v1/particles/recent, /v1/alerts, /metrics, "
                                  "PUT /v1/clusters/ID/label, "
                                  "POST /v1/baseline");
  }
  if (request.method != allow) {
    HttpResponse response = ErrorResponse(
        405, "method " + request.method + " is not allowed here; use " + std::string(allow));
    response.headers.emplace_back("Allow", allow);
    return response;
  }
  if (write) {
    if (auto refused = CheckToken(request, token)) return *refused;
  }
  Result<QueryParameters> parameters = ParseQuery(query);
  if (!parameters.ok()) return ErrorResponse(400, parameters.status().message());
  if (path == "/v1/counts") return Counts(*parameters, backend);
  if (path == "/v1/series") return Series(*parameters, backend);
  if (path == "/v1/particles/recent") return RecentParticles(*parameters, backend);
  if (auto bad = CheckParameters(*parameters, {})) return *bad;

  if (path == "/") return RootPage();
  if (path == "/v1/health") return JsonResponse(200, ToJson(backend.Health()));
  if (path == "/v1/clusters") return JsonResponse(200, ToJson(backend.Clusters()));
  if (path == "/v1/alerts") return JsonResponse(200, backend.Alerts());
  if (path == "/metrics") {
    return {200, "text/plain; version=0.0.4; charset=utf-8", backend.Metrics(), {}};
  }
  if (path == "/v1/baseline") return AcceptBaseline(backend);
  std::uint32_t id = 0;
  const char* end = label_id->data() + label_id->size();
  auto [parsed_to, error] = std::from_chars(label_id->data(), end, id);
  if (error != std::errc() || parsed_to != end) {
    return ErrorResponse(404, "no cluster \"" + std::string(label_id->substr(0, 20)) +
                                  "\": cluster ids are whole numbers, see GET /v1/clusters");
  }
  return SetLabel(id, request, backend);
}

}  // namespace

HttpResponse ErrorResponse(int status, std::string_view message) {
  return JsonResponse(status, {{"error", {{"status", status}, {"message", std::string(message)}}}});
}

HttpResponse Route(const HttpRequest& request, ApiBackend& backend, const std::string& token) {
  try {
    return RouteOrThrow(request, backend, token);
  } catch (const std::exception& error) {
    return ErrorResponse(500, std::string("internal error while answering: ") + error.what());
  }
}

}  // namespace seston
