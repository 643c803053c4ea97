#include "ingest/reply_channel.h"

#include <nlohmann/json.hpp>

namespace seston {
namespace {

std::string Dump(const nlohmann::ordered_json& object) {
  return object.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

}  // namespace

Reply Reply::Rejected(std::uint64_t line_number, std::string_view reason, std::string_view detail) {
  nlohmann::ordered_json object;
  object["rejected"] = line_number;
  object["reason"] = reason;
  object["detail"] = detail;
  return Reply{Dump(object)};
}

Reply Reply::Committed(std::string_view sample, std::uint64_t particles) {
  nlohmann::ordered_json object;
  object["committed"] = sample;
  object["particles"] = particles;
  return Reply{Dump(object)};
}

Reply Reply::Error(std::string_view message) {
  nlohmann::ordered_json object;
  object["error"] = message;
  return Reply{Dump(object)};
}

}  // namespace seston
