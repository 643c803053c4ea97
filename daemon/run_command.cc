// sestond run: wires the live daemon together. Threads:
//   main      the pipeline thread: ServiceLoop::Run owns the StationService;
//   io        one Boost.Asio io_context thread: HTTP API, drop-directory watcher, socket
//             server and the signal set (every handler there is short and never waits
//             for the pipeline, except an API write, which waits for its own answer);
//   hook      the alert hook (AlertHookRunner); alert forwarding has a thread of its own
//             (daemon/reload.h, AlertOutputs).
// systemd (Type=notify, base/systemd_notify.h): READY=1 once the state is loaded and the
// watcher, the socket and the API run; WATCHDOG=1 at half of WatchdogSec, sent by a task
// the pipeline thread runs, so a stuck pipeline stops the pings; STOPPING=1 at a stop.
// SIGHUP re-reads the config file and applies what may change live (daemon/reload.h).
// Shutdown order on SIGTERM/SIGINT: the watcher stops, the loop finishes the file or
// batch in hand and writes closed bins and a last checkpoint (answering socket commits),
// then the socket server and the API close their connections and the io thread ends.
#include <spdlog/spdlog.h>

#include <boost/asio/executor_work_guard.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/signal_set.hpp>
#include <boost/asio/steady_timer.hpp>
#include <chrono>
#include <csignal>
#include <cstdio>
#include <exception>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "api/api_token.h"
#include "api/http_server.h"
#include "base/clock.h"
#include "base/command_line.h"
#include "base/file_system.h"
#include "base/systemd_notify.h"
#include "config/config_loader.h"
#include "daemon/alert_hook_runner.h"
#include "daemon/commands.h"
#include "daemon/logging.h"
#include "daemon/reload.h"
#include "ingest/drop_directory_watcher.h"
#include "ingest/record_queue.h"
#include "ingest/socket_server.h"
#include "pipeline/service_backend.h"
#include "pipeline/service_loop.h"
#include "pipeline/station_service.h"

namespace seston::daemon {
namespace {

// How long the io thread may take, after the pipeline stopped, to deliver the last
// replies and close connections (the socket server allows itself 2 s).
constexpr auto kCloseDeadline = std::chrono::seconds(5);

std::string SocketText(const InputOptions& input) {
  std::string text;
  if (!input.socket.listen.empty()) text = "tcp " + input.socket.listen;
  if (!input.socket.unix_path.empty()) {
    text += (text.empty() ? "unix " : ", unix ") + input.socket.unix_path;
  }
  return text.empty() ? "off" : text;
}

int Serve(const Config& config) {
  FileSystem& fs = PosixFileSystem::Instance();
  const Clock& clock = SystemClock::Instance();

  std::string token;
  if (config.api.token_file.empty()) {
    spdlog::warn("api.token_file is not set: label and baseline writes are refused (403)");
  } else {
    auto loaded = LoadApiToken(fs, config.api.token_file);
    if (!loaded.ok()) {
      spdlog::error("api.token_file: {}", loaded.status().message());
      return kExitUsage;
    }
    token = std::move(*loaded);
  }

  auto service = StationService::Create(config, fs, clock, SESTON_VERSION);
  if (!service.ok()) {
    spdlog::error("cannot start: {}", service.status().message());
    return kExitFailed;
  }
  auto notifier = SystemdNotifier::FromEnvironment();
  if (!notifier.ok()) {
    spdlog::error("systemd notification: {}", notifier.status().message());
    return kExitFailed;
  }
  const std::string listen = config.api.listen.starts_with(':') ? "127.0.0.1" + config.api.listen
                                                                : config.api.listen;
  auto outputs = AlertOutputs::Create(config.alerts, clock, "http://" + listen + "/");
  if (!outputs.ok()) {
    spdlog::error("alerts: {}", outputs.status().message());
    return kExitUsage;
  }

  boost::asio::io_context io;
  auto work = boost::asio::make_work_guard(io);
  const SocketOptions& socket_options = config.input.socket;
  const bool socket_wanted = !socket_options.listen.empty() || !socket_options.unix_path.empty();
  RecordQueue queue(std::max<std::size_t>(1, socket_options.max_queued_records),
                    std::max<std::size_t>(1, socket_options.max_queued_bytes));

  std::unique_ptr<DropDirectoryWatcher> watcher;
  ServiceLoop::Inputs inputs;
  inputs.ready_files = [&watcher] { return watcher->ReadyFiles(); };
  inputs.mark_handled = [&watcher](const std::string& name) { watcher->MarkHandled(name); };
  inputs.forget = [&watcher](const std::string& name) { watcher->Forget(name); };
  inputs.records = socket_wanted ? &queue : nullptr;
  inputs.alert_files = [&outputs](std::vector<std::filesystem::path> files) {
    (*outputs)->Deliver(std::move(files));
  };
  ServiceLoop loop(**service, std::move(inputs));

  auto created_watcher = DropDirectoryWatcher::Create(io, config.input, fs, clock,
                                                      [&loop] { loop.NotifyFilesReady(); });
  if (!created_watcher.ok()) {
    spdlog::error("drop directory: {}", created_watcher.status().message());
    return kExitFailed;
  }
  watcher = std::move(*created_watcher);

  ServiceBackend backend((*service)->shared_board(), loop, clock, [&watcher, &queue, &loop] {
    return ServiceBackend::Backlog{watcher->tracked_files() + loop.files_in_hand(), queue.size()};
  });
  Reloader reloader(config.source_path, config, loop, **outputs);
  backend.SetMetricsExtras([&watcher, &outputs, &reloader](ServiceMetricsExtras& extras) {
    extras.inotify_overflows = watcher->inotify_overflows();
    extras.forwarding = (*outputs)->forwarding_stats();
    reloader.AddCounts(extras);
  });
  auto http = HttpServer::Create(io, config.api, backend, token);
  if (!http.ok()) {
    spdlog::error("api.listen: {}", http.status().message());
    return kExitFailed;
  }
  std::unique_ptr<SocketServer> socket;
  if (socket_wanted) {
    auto created = SocketServer::Create(io, config.input, queue);
    if (!created.ok()) {
      spdlog::error("input.socket: {}", created.status().message());
      return kExitFailed;
    }
    socket = std::move(*created);
  }

  boost::asio::signal_set signals(io, SIGINT, SIGTERM);
  signals.async_wait([&](const boost::system::error_code& error, int signal_number) {
    if (error) return;
    spdlog::info("signal {}: stopping; no new files, finishing the work in hand", signal_number);
    (void)(*notifier)->Stopping("stopping: finishing the work in hand, then a last checkpoint");
    watcher->Stop();
    loop.RequestStop();
  });

  boost::asio::signal_set hangups(io, SIGHUP);
  std::function<void()> await_hangup = [&] {
    hangups.async_wait([&](const boost::system::error_code& error, int) {
      if (error) return;
      reloader.Reload();
      await_hangup();
    });
  };
  await_hangup();

  // The ping is a task of the pipeline thread: it is sent only while that thread turns.
  boost::asio::steady_timer watchdog(io);
  std::function<void()> arm_watchdog = [&] {
    std::optional<double> interval = (*notifier)->watchdog_interval_seconds();
    if (!interval) return;
    watchdog.expires_after(std::chrono::duration_cast<std::chrono::steady_clock::duration>(
        std::chrono::duration<double>(*interval)));
    watchdog.async_wait([&](const boost::system::error_code& error) {
      if (error) return;
      loop.Post([&notifier](StationService&) {
        if (Status sent = (*notifier)->Watchdog(); !sent.ok()) spdlog::warn("{}", sent.message());
      });
      arm_watchdog();
    });
  };
  arm_watchdog();

  (*http)->Start();
  if (Status started = watcher->Start(); !started.ok()) {
    spdlog::error("drop directory: {}", started.message());
    return kExitFailed;
  }
  if (socket) socket->Start();
  spdlog::info(
      "sestond {} running for \"{}\": drop directory {}, API http://127.0.0.1:{} ({}), "
      "socket {}{}",
      SESTON_VERSION, config.station, config.input.drop_dir, (*http)->port(), config.api.listen,
      SocketText(config.input),
      socket && socket->port() != 0 ? " port " + std::to_string(socket->port()) : "");

  if (Status sent = (*notifier)->Ready("running: drop directory " + config.input.drop_dir +
                                        ", API port " + std::to_string((*http)->port()));
      !sent.ok()) {
    spdlog::warn("{}", sent.message());
  }

  std::thread io_thread([&io] {
    try {
      io.run();
    } catch (const std::exception& error) {
      spdlog::error("io thread stopped by an exception: {}", error.what());
    }
  });

  Status finished = loop.Run();
  if (finished.ok()) {
    spdlog::info("state saved; closing connections");
  } else {
    spdlog::error(
        "the last checkpoint could not be written ({}); the previous one stands and "
        "work after it is done again at the next start",
        finished.message());
  }

  boost::asio::post(io, [&] {
    boost::system::error_code ignored;
    signals.cancel(ignored);
    hangups.cancel(ignored);
    watchdog.cancel();
    watcher->Stop();
  });
  if (socket) socket->Stop();
  (*http)->Stop();
  queue.Close();
  work.reset();
  const auto deadline = std::chrono::steady_clock::now() + kCloseDeadline;
  while (!io.stopped() && std::chrono::steady_clock::now() < deadline) {
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  io.stop();
  io_thread.join();
  spdlog::info("stopped");
  return finished.ok() ? kExitOk : kExitFailed;
}

}  // namespace

int RunCommand(const std::vector<std::string>& args) {
  CommandLine cli("sestond run",
                  "Runs the live daemon: takes sample files from the drop directory and NDJSON\n"
                  "records from the socket, groups and counts every particle, writes count files\n"
                  "and alert files, checkpoints its state so that nothing is lost or counted\n"
                  "twice, and answers the HTTP API (see sestonctl). Stops cleanly on SIGTERM or\n"
                  "SIGINT. Logs go to stderr.");
  cli.AddOption("config", "FILE", "the config file (YAML)");
  Status parsed = cli.Parse(args);
  if (cli.help_requested()) {
    std::fputs(cli.Help().c_str(), stdout);
    return kExitOk;
  }
  if (parsed.ok() && !cli.Has("config")) {
    parsed = Status::InvalidArgument("sestond run: --config FILE is required");
  }
  if (parsed.ok() && !cli.positionals().empty()) {
    parsed = Status::InvalidArgument("sestond run: unexpected argument \"" +
                                     cli.positionals().front() + "\" (only --config FILE)");
  }
  if (!parsed.ok()) {
    std::fprintf(stderr, "%s\n%s", parsed.message().c_str(), cli.Usage().c_str());
    return kExitUsage;
  }
  auto config = LoadConfig(PosixFileSystem::Instance(), *cli.Get("config"));
  if (!config.ok()) {
    std::fprintf(stderr, "%s\n", config.status().message().c_str());
    return kExitUsage;
  }
  SetUpLogging(config->logging);
  return Serve(*config);
}

}  // namespace seston::daemon
