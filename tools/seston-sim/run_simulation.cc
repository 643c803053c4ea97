#include "seston-sim/run_simulation.h"

#include <chrono>
#include <memory>
#include <optional>
#include <thread>

#include "base/time_format.h"
#include "seston-sim/directory_writer.h"
#include "seston-sim/sample_generator.h"
#include "seston-sim/socket_sender.h"

namespace seston::sim {
namespace {

// Where samples go: a directory or a socket.
struct Destination {
  std::optional<DirectoryWriter> directory;
  std::unique_ptr<SocketSender> socket;
};

Result<Destination> OpenDestination(const CommandLine& command, FileSystem& fs, std::ostream& log) {
  Destination destination;
  if (!command.socket.empty()) {
    SESTON_ASSIGN_OR_RETURN(destination.socket,
                            SocketSender::Connect(command.socket, [&log](std::string_view line) {
                              log << "seston-sim: server answered: " << line << "\n";
                            }));
    return destination;
  }
  DirectoryWriterOptions options;
  options.mode = !command.live        ? FileWriteMode::kDirect
                 : command.slow_write ? FileWriteMode::kSlowWrite
                                      : FileWriteMode::kRenameIn;
  options.slow_write_seconds = command.slow_write_seconds;
  SESTON_ASSIGN_OR_RETURN(DirectoryWriter writer,
                          DirectoryWriter::Create(fs, command.out_dir, options));
  destination.directory.emplace(std::move(writer));
  return destination;
}

}  // namespace

Status RunSimulation(const CommandLine& command, FileSystem& fs, std::ostream& log,
                     bool progress_line) {
  SESTON_ASSIGN_OR_RETURN(SampleGenerator generator, SampleGenerator::Create(command.simulator));
  SESTON_ASSIGN_OR_RETURN(Destination destination, OpenDestination(command, fs, log));
  const SimulatorOptions& options = generator.options();
  std::optional<std::uint64_t> change_index = generator.ChangeSampleIndex();
  auto wall_start = std::chrono::steady_clock::now();

  std::uint64_t particles = 0;
  std::uint64_t produced = 0;
  for (std::uint64_t n = 0; command.samples == 0 || n < command.samples; ++n) {
    SimulatedSample sample = generator.Generate(n);
    double sample_end = sample.start_seconds + options.acquisition_seconds;
    if (command.live) {
      std::chrono::duration<double> wall_offset((sample_end - options.start_seconds) /
                                                command.speed);
      std::this_thread::sleep_until(
          wall_start +
          std::chrono::duration_cast<std::chrono::steady_clock::duration>(wall_offset));
    }
    if (change_index && *change_index == n) {
      if (progress_line && !command.live) log << "\n";
      log << "seston-sim: " << generator.ChangeNotice() << "\n";
    }
    if (destination.socket) {
      SESTON_RETURN_IF_ERROR(
          destination.socket->Send(FormatNdjson(sample, options.groups, command.truth)));
    } else {
      SESTON_RETURN_IF_ERROR(destination.directory->Write(
          sample.file_name, FormatCsv(sample, options.groups, command.truth)));
    }
    particles += sample.particles.size();
    ++produced;
    if (command.live) {
      log << "seston-sim: " << FormatIso8601(sample_end) << " " << sample.id << " "
          << sample.particles.size() << " particles, " << sample.volume_ml << " mL -> "
          << (destination.socket ? command.socket : sample.file_name) << "\n";
      log.flush();
    } else if (progress_line && (n % 16 == 15 || n + 1 == command.samples)) {
      log << "\rseston-sim: " << produced << "/" << command.samples << " samples, " << particles
          << " particles, at " << FormatIso8601(sample_end) << std::flush;
    }
  }
  if (destination.socket) SESTON_RETURN_IF_ERROR(destination.socket->Finish());
  if (progress_line && !command.live) log << "\n";
  double first = options.start_seconds;
  double last = options.start_seconds +
                static_cast<double>(produced - 1) * options.sample_interval_seconds +
                options.acquisition_seconds;
  log << "seston-sim: wrote " << produced << (destination.socket ? " samples" : " files") << ", "
      << particles << " particles, event time " << FormatIso8601(first) << " to "
      << FormatIso8601(last) << ", to " << (destination.socket ? command.socket : command.out_dir)
      << "\n";
  return Status::Ok();
}

}  // namespace seston::sim
