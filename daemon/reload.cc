#include "daemon/reload.h"

#include <spdlog/spdlog.h>

#include "alerts/alert_event.h"
#include "api/http_client.h"
#include "base/file_system.h"
#include "config/config_diff.h"
#include "config/config_loader.h"

namespace seston::daemon {
namespace {

// An alert file is a few kilobytes; anything far larger is not one of ours.
constexpr std::uint64_t kMaxAlertFileBytes = 1 << 20;

}  // namespace

AlertPoster HttpAlertPoster() {
  return [](const AlertmanagerEndpoint& endpoint, const std::string& body,
            double timeout_seconds) -> Result<int> {
    SESTON_ASSIGN_OR_RETURN(auto client, HttpClient::Connect(endpoint.host_port, timeout_seconds));
    SESTON_ASSIGN_OR_RETURN(HttpReply reply, client->Send("POST", endpoint.target, body));
    return reply.status;
  };
}

Result<std::unique_ptr<AlertOutputs>> AlertOutputs::Create(const AlertOptions& alerts,
                                                           const Clock& clock,
                                                           std::string generator_url) {
  std::unique_ptr<AlertOutputs> outputs(new AlertOutputs(clock, std::move(generator_url)));
  SESTON_RETURN_IF_ERROR(outputs->Reconfigure(alerts));
  return outputs;
}

Result<std::shared_ptr<AlertmanagerClient>> AlertOutputs::MakeForwarder(
    const AlertmanagerOptions& options) {
  if (options.url.empty()) return std::shared_ptr<AlertmanagerClient>();
  SESTON_ASSIGN_OR_RETURN(
      auto client, AlertmanagerClient::Create(options, generator_url_, HttpAlertPoster(), clock_));
  return std::shared_ptr<AlertmanagerClient>(std::move(client));
}

Status AlertOutputs::Reconfigure(const AlertOptions& alerts) {
  const bool first = hooks_ == nullptr;
  if (first || alerts.hook_command != options_.hook_command ||
      alerts.hook_timeout_seconds != options_.hook_timeout_seconds) {
    SESTON_ASSIGN_OR_RETURN(auto hooks, AlertHookRunner::Create(alerts, clock_));
    if (hooks_) retired_hooks_.push_back(std::move(hooks_));
    hooks_ = std::move(hooks);
  }
  std::shared_ptr<AlertmanagerClient> current;
  {
    std::lock_guard lock(forwarder_mutex_);
    current = forwarder_;
  }
  if (current && !alerts.alertmanager.url.empty()) {
    SESTON_RETURN_IF_ERROR(current->Reconfigure(alerts.alertmanager));
  } else {
    SESTON_ASSIGN_OR_RETURN(auto replacement, MakeForwarder(alerts.alertmanager));
    std::lock_guard lock(forwarder_mutex_);
    forwarder_ = std::move(replacement);
  }
  options_ = alerts;
  return Status::Ok();
}

void AlertOutputs::Deliver(std::vector<std::filesystem::path> files) {
  std::shared_ptr<AlertmanagerClient> forwarder;
  {
    std::lock_guard lock(forwarder_mutex_);
    forwarder = forwarder_;
  }
  if (forwarder) {
    for (const std::filesystem::path& file : files) {
      Result<std::string> text = PosixFileSystem::Instance().ReadFile(file, kMaxAlertFileBytes);
      if (!text.ok()) {
        spdlog::warn("alert forwarding: cannot read {}: {}", file.string(),
                     text.status().message());
        continue;
      }
      nlohmann::json json = nlohmann::json::parse(*text, nullptr, /*allow_exceptions=*/false);
      Result<AlertEvent> event = AlertEventFromJson(json);
      if (!event.ok()) {
        spdlog::warn("alert forwarding: {} is not an alert file: {}", file.string(),
                     event.status().message());
        continue;
      }
      forwarder->Observe(*event);
    }
  }
  hooks_->Enqueue(std::move(files));
}

std::optional<AlertmanagerForwarder::Stats> AlertOutputs::forwarding_stats() const {
  std::lock_guard lock(forwarder_mutex_);
  if (!forwarder_) return std::nullopt;
  return forwarder_->stats();
}

void Reloader::Reload() {
  spdlog::info("SIGHUP: reading {} again", config_path_.string());
  Config loaded;
  std::vector<ConfigProblem> problems =
      CheckConfigFile(PosixFileSystem::Instance(), config_path_, &loaded);
  if (!problems.empty()) {
    ++invalid_;
    std::string text;
    for (const ConfigProblem& problem : problems) text += "\n  " + problem.ToString();
    spdlog::error("reload refused, the running configuration is kept: {} is not valid:{}",
                  config_path_.string(), text);
    return;
  }
  loaded.source_path = config_path_.string();
  ConfigDiff diff;
  {
    std::lock_guard lock(mutex_);
    diff = DiffConfigs(running_, loaded);
  }
  if (diff.refused()) {
    ++refused_;
    spdlog::error("{}", diff.RefusalMessage());
    return;
  }
  if (std::string later = diff.Describe(ReloadEffect::kRestart); !later.empty()) {
    spdlog::warn(
        "reload: these keys take effect only at the next start, their old values "
        "stay in force until then: {}",
        later);
  }
  std::string live = diff.Describe(ReloadEffect::kLive);
  if (live.empty()) {
    ++applied_;
    spdlog::info("reload: nothing to change now");
    return;
  }
  bool posted = loop_.Post([this, loaded, live](StationService& service) {
    Status applied = service.ApplyLiveConfig(loaded);
    if (applied.ok()) applied = outputs_.Reconfigure(service.pipeline().config().alerts);
    if (!applied.ok()) {
      ++invalid_;
      spdlog::error("reload refused, the running configuration is kept: {}", applied.message());
      return;
    }
    spdlog::set_level(spdlog::level::from_str(loaded.logging.level));
    {
      std::lock_guard lock(mutex_);
      const Config& now = service.pipeline().config();
      running_.input = now.input;
      running_.drift = now.drift;
      running_.alerts = now.alerts;
      running_.logging = now.logging;
    }
    ++applied_;
    spdlog::info("reload applied: {}", live);
  });
  if (!posted) {
    ++invalid_;
    spdlog::error("reload not applied: the pipeline is stopping or busy; send SIGHUP again");
  }
}

}  // namespace seston::daemon
