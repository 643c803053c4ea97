#include "sestonctl/sestonctl.h"

#include <algorithm>
#include <functional>
#include <nlohmann/json.hpp>

#include "api/api_token.h"
#include "api/http_client.h"
#include "api/query_string.h"
#include "base/command_line.h"
#include "base/file_system.h"
#include "sestonctl/tables.h"

namespace seston::ctl {
namespace {

constexpr char kDefaultApi[] = "127.0.0.1:7460";

struct Command {
  const char* name;
  const char* arguments;  // for usage lines, after the name
  const char* summary;
};

constexpr Command kCommands[] = {
    {"status", "", "the daemon's state, uptime, particle and file totals"},
    {"counts", "[--window 1h | --from TIME --to TIME]",
     "counts and concentration (per mL) per cluster over a window"},
    {"clusters", "", "every cluster: label, size, spread, centre in input units"},
    {"alerts", "", "active and recently resolved alerts"},
    {"label", "ID NAME", "name cluster ID (needs --token-file)"},
    {"baseline", "accept", "take the present clusters as the drift baseline (needs --token-file)"},
};

// Global options: these take a value, so the word after them is not the command.
constexpr std::string_view kValueOptions[] = {"--api",    "--token-file", "--timeout",
                                              "--window", "--from",       "--to"};

std::string GlobalHelp() {
  std::string help =
      "usage: sestonctl [--api HOST:PORT] [--token-file FILE] [--json] [--timeout SECONDS] "
      "COMMAND\n\nQueries and labels a running sestond.\n\ncommands:\n";
  for (const Command& command : kCommands) {
    std::string arguments = command.arguments;
    help += std::string("  ") + command.name + (arguments.empty() ? "" : " " + arguments) +
            "\n      " + command.summary + "\n";
  }
  help +=
      "\n`sestonctl COMMAND --help` shows a command's options. --api defaults to $SESTON_API, "
      "else 127.0.0.1:7460.\nexit codes: 0 done, 1 the daemon answered with an error, 2 usage "
      "error, 3 daemon not reachable\n";
  return help;
}

// Index in `args` of the command word: the first argument that is neither an option nor
// the value of one. nullopt when there is none.
std::optional<std::size_t> FindCommand(const std::vector<std::string>& args) {
  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& arg = args[i];
    if (arg == "--") return i + 1 < args.size() ? std::optional(i + 1) : std::nullopt;
    if (!arg.starts_with("-")) return i;
    if (std::find(std::begin(kValueOptions), std::end(kValueOptions), arg) !=
        std::end(kValueOptions)) {
      ++i;
    }
  }
  return std::nullopt;
}

const Command* FindCommandSpec(std::string_view name) {
  for (const Command& command : kCommands) {
    if (command.name == name) return &command;
  }
  return nullptr;
}

std::string UnknownCommandMessage(std::string_view name) {
  std::string closest;
  std::size_t best = 3;  // suggest only near misses
  std::string all;
  for (const Command& command : kCommands) {
    all += (all.empty() ? "" : ", ") + std::string(command.name);
    if (std::size_t distance = EditDistance(name, command.name); distance < best) {
      best = distance;
      closest = command.name;
    }
  }
  return "sestonctl: unknown command \"" + std::string(name) + "\"" +
         (closest.empty() ? "" : "; did you mean " + closest + "?") + " (commands: " + all + ")";
}

CommandLine MakeCommandLine(const Command& command, const std::string& default_api) {
  CommandLine cli(std::string("sestonctl ") + command.name, command.summary);
  cli.AddOption("api", "HOST:PORT", "where sestond listens ($SESTON_API)", default_api);
  cli.AddOption("token-file", "FILE",
                "file holding the API token (the daemon's api.token_file), for writes");
  cli.AddFlag("json", "print the daemon's JSON answer instead of a table");
  cli.AddOption("timeout", "SECONDS", "give up on an unanswered request after this long", "10");
  std::string_view name = command.name;
  if (name == "counts") {
    cli.AddOption("window", "DURATION",
                  "window ending at the latest particle: 3600, 90m, 1h, 2d (s m h d)");
    cli.AddOption("from", "TIME", "window start, ISO 8601 UTC (2026-12-02T03:04:05Z)");
    cli.AddOption("to", "TIME", "window end, ISO 8601 UTC; default the latest particle");
  } else if (name == "label") {
    cli.AddPositional("ID", "cluster id, as shown by `sestonctl clusters`");
    cli.AddPositional("NAME", "1 to 64 characters; quote a name with spaces");
  } else if (name == "baseline") {
    cli.AddPositional("accept", "the word accept, to confirm");
  }
  return cli;
}

// The HTTP request a command makes.
struct Request {
  std::string method = "GET";
  std::string target;
  std::string body;
  bool writes = false;
};

Result<Request> BuildRequest(std::string_view name, const CommandLine& cli) {
  const std::vector<std::string>& words = cli.positionals();
  auto expect_words = [&](std::size_t count, std::string_view what) -> Status {
    if (words.size() == count) return Status::Ok();
    return Status::InvalidArgument("sestonctl " + std::string(name) + ": expected " +
                                   std::string(what) + ", got " + std::to_string(words.size()) +
                                   " argument(s)");
  };
  Request request;
  if (name == "status" || name == "clusters" || name == "alerts") {
    SESTON_RETURN_IF_ERROR(expect_words(0, "no arguments"));
    request.target = name == "status" ? "/v1/health" : "/v1/" + std::string(name);
  } else if (name == "counts") {
    SESTON_RETURN_IF_ERROR(expect_words(0, "no arguments besides its options"));
    std::string query;
    for (const char* option : {"window", "from", "to"}) {
      if (auto value = cli.Get(option)) {
        query += (query.empty() ? "?" : "&") + std::string(option) + "=" + PercentEncode(*value);
      }
    }
    request.target = "/v1/counts" + query;
  } else if (name == "label") {
    SESTON_RETURN_IF_ERROR(expect_words(2, "ID NAME"));
    const std::string& id = words[0];
    if (id.empty() ||
        !std::all_of(id.begin(), id.end(), [](char c) { return c >= '0' && c <= '9'; })) {
      return Status::InvalidArgument(
          "sestonctl label: ID must be a cluster id (a whole number), "
          "got \"" +
          id + "\"");
    }
    request = {"PUT", "/v1/clusters/" + id + "/label", nlohmann::json{{"label", words[1]}}.dump(),
               true};
  } else {
    if (words.size() != 1 || words[0] != "accept") {
      return Status::InvalidArgument(
          "sestonctl baseline: write `sestonctl baseline accept` to "
          "take the present clusters as the new baseline");
    }
    request = {"POST", "/v1/baseline", "", true};
  }
  return request;
}

Result<HttpReply> Exchange(const std::string& api, double timeout_seconds, const Request& request,
                           const std::string& token) {
  SESTON_ASSIGN_OR_RETURN(std::unique_ptr<HttpClient> client,
                          HttpClient::Connect(api, timeout_seconds));
  return client->Send(request.method, request.target, request.body, token);
}

// "the daemon said" part of an error reply: its message, or the raw body.
std::string ServerMessage(const HttpReply& reply) {
  nlohmann::json body = nlohmann::json::parse(reply.body, nullptr, false);
  if (body.is_object() && body.contains("error") && body["error"].is_object() &&
      body["error"].contains("message") && body["error"]["message"].is_string()) {
    return body["error"]["message"].get<std::string>();
  }
  return reply.body.empty() ? "(no message)" : reply.body;
}

std::string Render(std::string_view name, const std::string& body) {
  nlohmann::json json = nlohmann::json::parse(body, nullptr, false);
  if (json.is_discarded()) return body;
  if (name == "status") return FormatStatus(json);
  if (name == "counts") return FormatCounts(json);
  if (name == "clusters") return FormatClusters(json);
  if (name == "alerts") return FormatAlerts(json);
  if (name == "label") {
    return "cluster " + json.value("id", nlohmann::json()).dump() + " is now labelled \"" +
           json.value("label", "") + "\"\n";
  }
  return "baseline accepted: drift is now measured against the present clusters\n";
}

}  // namespace

int RunSestonctl(const std::vector<std::string>& args,
                 const std::optional<std::string>& api_from_environment, std::ostream& out,
                 std::ostream& err) {
  std::optional<std::size_t> command_index = FindCommand(args);
  bool help = std::any_of(args.begin(), args.end(),
                          [](const std::string& arg) { return arg == "--help" || arg == "-h"; });
  if (!command_index) {
    (help ? out : err) << GlobalHelp();
    return help ? kExitOk : kExitUsage;
  }
  const Command* command = FindCommandSpec(args[*command_index]);
  if (command == nullptr) {
    err << UnknownCommandMessage(args[*command_index]) << "\n";
    return kExitUsage;
  }
  std::vector<std::string> rest = args;
  rest.erase(rest.begin() + static_cast<std::ptrdiff_t>(*command_index));
  CommandLine cli = MakeCommandLine(*command, api_from_environment.value_or(kDefaultApi));
  Status parsed = cli.Parse(rest);
  if (cli.help_requested()) {
    out << cli.Help();
    return kExitOk;
  }
  if (!parsed.ok()) {
    err << parsed.message() << "\n" << cli.Usage();
    return kExitUsage;
  }
  Result<double> timeout = cli.GetDouble("timeout", 0.1, 3600);
  Result<Request> request = BuildRequest(command->name, cli);
  for (const Status& status : {timeout.status(), request.status()}) {
    if (status.ok()) continue;
    err << status.message() << "\n" << cli.Usage();
    return kExitUsage;
  }

  std::string token;
  if (request->writes && cli.Get("token-file")) {
    Result<std::string> loaded = LoadApiToken(PosixFileSystem::Instance(), *cli.Get("token-file"));
    if (!loaded.ok()) {
      err << "sestonctl: " << loaded.status().message() << "\n";
      return kExitUsage;
    }
    token = *loaded;
  }

  Result<HttpReply> reply = Exchange(*cli.Get("api"), *timeout, *request, token);
  if (!reply.ok()) {
    if (reply.status().code() != StatusCode::kUnavailable) {
      err << "sestonctl: --api: " << reply.status().message() << "\n";
      return kExitUsage;
    }
    err << reply.status().message() << " \u2014 is it running? (systemctl status sestond)\n";
    return kExitUnreachable;
  }
  if (reply->status < 200 || reply->status >= 300) {
    err << "sestonctl: sestond answered " << reply->status << ": " << ServerMessage(*reply);
    if (reply->status == 401 && token.empty()) {
      err << " (pass --token-file FILE, the file named by api.token_file)";
    }
    err << "\n";
    return kExitServerError;
  }
  if (cli.Flag("json")) {
    out << reply->body << (reply->body.ends_with('\n') ? "" : "\n");
  } else {
    out << Render(command->name, reply->body);
  }
  return kExitOk;
}

}  // namespace seston::ctl
