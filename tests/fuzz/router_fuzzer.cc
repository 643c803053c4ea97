// Fuzz target: Route (the HTTP API's meaning, api/router.h) on arbitrary requests, with
// the fake backend of the API tests.
//
// The input is split at its first three line feeds into method, target, Authorization
// value and body. Beyond "no crash, no sanitiser report", each answer must be a real
// HTTP status with a content type; every error must be the documented JSON error
// object carrying the same status; and a write (PUT, POST) may succeed only with the
// right bearer token, so no request text gets past the token check. The scheme name is
// case-insensitive and may be followed by several spaces (RFC 7235, section 2.1).
#include <cstddef>
#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <string_view>

#include "api/fake_backend.h"
#include "api/router.h"
#include "fuzz/fuzz_check.h"

namespace {

constexpr std::string_view kToken = "fuzz-token-0123456789";

// Whether `authorization` presents kToken: "Bearer", in any case, spaces, the token.
bool PresentsToken(std::string_view authorization) {
  constexpr std::string_view kScheme = "bearer";
  if (authorization.size() <= kScheme.size() || authorization[kScheme.size()] != ' ') return false;
  for (std::size_t i = 0; i < kScheme.size(); ++i) {
    if ((authorization[i] | 0x20) != kScheme[i]) return false;
  }
  const std::size_t token_start = authorization.find_first_not_of(' ', kScheme.size());
  return token_start != std::string_view::npos && authorization.substr(token_start) == kToken;
}

std::string_view TakeLine(std::string_view& rest) {
  const std::size_t end = rest.find('\n');
  const std::string_view line = rest.substr(0, end);
  rest = end == std::string_view::npos ? std::string_view() : rest.substr(end + 1);
  return line;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::string_view rest(reinterpret_cast<const char*>(data), size);
  seston::HttpRequest request;
  request.method = std::string(TakeLine(rest));
  request.target = std::string(TakeLine(rest));
  request.authorization = std::string(TakeLine(rest));
  request.body = std::string(rest);

  seston::testing::FakeBackend backend;
  seston::ClusterView cluster;
  cluster.id = 3;
  cluster.label = "diatom chains";
  cluster.count = 120;
  backend.clusters.push_back(cluster);
  const seston::HttpResponse response = seston::Route(request, backend, std::string(kToken));

  FUZZ_CHECK(response.status >= 200 && response.status <= 599);
  FUZZ_CHECK(!response.content_type.empty());
  if (response.status >= 400 && response.content_type.find("json") != std::string::npos) {
    const nlohmann::json body = nlohmann::json::parse(response.body, nullptr, false);
    FUZZ_CHECK(!body.is_discarded());
    FUZZ_CHECK(body.at("error").at("status") == response.status);
    FUZZ_CHECK(body.at("error").at("message").is_string());
  }
  if (request.method != "GET" && request.method != "HEAD" && response.status < 300) {
    FUZZ_CHECK(PresentsToken(request.authorization));
  }
  if (backend.clusters.front().label != "diatom chains" || backend.baselines_accepted > 0) {
    FUZZ_CHECK(PresentsToken(request.authorization));
  }
  return 0;
}
