#include "config/config_summary.h"

#include <sstream>

#include "config/option_names.h"
#include "config/value_text.h"

namespace seston {
namespace {

std::string FeatureText(const FeatureSpec& spec) {
  if (spec.transform == Transform::kNone) return spec.column;
  return std::string(TransformWord(spec.transform)) + "(" + spec.column + ")";
}

}  // namespace

std::string DescribeConfig(const Config& config) {
  const InputOptions& in = config.input;
  const ModelOptions& model = config.model;
  const DriftOptions& drift = config.drift;
  std::ostringstream out;
  out << "station " << QuotedText(config.station) << ", read from " << config.source_path << "\n";

  out << "input: files ending " << QuotedText(in.file_suffix) << " in " << in.drop_dir << " ("
      << WatchModeWord(in.watch) << ", rescan every " << NumberText(in.rescan_seconds)
      << " s, taken after " << NumberText(in.settle_seconds) << " s unchanged)\n";
  out << "  done files to " << in.done_dir << ", rejected files to " << in.quarantine_dir
      << " (more than " << NumberText(in.max_bad_row_fraction * 100) << " % bad rows, lines over "
      << in.max_line_bytes << " bytes rejected, files over " << in.max_file_bytes << " bytes)\n";
  out << "  columns: time " << QuotedText(in.time_column) << ", sample "
      << (in.sample_column.empty() ? "(each file is one sample)" : QuotedText(in.sample_column))
      << ", volume " << (in.volume_column.empty() ? "(none)" : QuotedText(in.volume_column))
      << " (else " << NumberText(in.default_volume_ml) << " mL per sample), delimiter "
      << QuotedText(std::string(1, in.delimiter)) << "\n";
  out << "  record socket: ";
  if (in.socket.listen.empty() && in.socket.unix_path.empty()) {
    out << "off\n";
  } else {
    if (!in.socket.listen.empty()) out << "tcp " << in.socket.listen << " ";
    if (!in.socket.unix_path.empty()) out << "unix " << in.socket.unix_path << " ";
    out << "(at most " << in.socket.max_connections << " clients, " << in.socket.max_queued_records
        << " queued records)\n";
  }

  out << "features (" << config.features.features.size() << "): ";
  for (std::size_t i = 0; i < config.features.features.size(); ++i) {
    out << (i == 0 ? "" : ", ") << FeatureText(config.features.features[i]);
  }
  out << (config.features.standardize ? "; standardised to z-scores frozen after warm-up\n"
                                      : "; not standardised\n");

  out << "model: ";
  if (model.k == 0) {
    out << "k chosen from " << model.k_min << " to " << model.k_max << " by the "
        << KSelectionRuleWord(model.k_rule) << " rule";
  } else {
    out << "k = " << model.k;
  }
  out << ", fitted after " << model.warmup_particles << " warm-up particles (" << model.restarts
      << " restarts, at most " << model.max_iterations << " iterations), seed " << model.seed
      << "\n";
  out << "  mini-batches of " << model.batch_size << "; forgetting: ";
  if (model.half_life_particles == 0 && model.half_life_seconds == 0) out << "never";
  if (model.half_life_particles > 0) {
    out << "half-life " << NumberText(model.half_life_particles) << " particles";
  }
  if (model.half_life_seconds > 0) {
    out << (model.half_life_particles > 0 ? " and " : "") << "half-life "
        << NumberText(model.half_life_seconds) << " s";
  }
  out << "\n  novelty: ";
  if (model.novelty_quantile >= 1.0) {
    out << "off";
  } else {
    out << "beyond the " << NumberText(model.novelty_quantile * 100)
        << " % distance quantile, buffer of " << model.novelty_buffer << " particles";
  }
  out << "\n";

  out << "counts: bins of " << NumberText(config.counts.bin_seconds) << " s written to "
      << config.counts.output_dir << " after a lag of "
      << NumberText(config.counts.bin_close_lag_seconds) << " s, " << config.counts.retained_bins
      << " bins kept for queries\n";

  out << "drift: ";
  if (!drift.enabled) {
    out << "off\n";
  } else {
    out << "evaluated every " << drift.evaluate_every_particles
        << " particles; composition alarm at JSD " << NumberText(drift.composition.alarm_jsd)
        << " bits over " << drift.composition.window_particles << " particles; centre alarm at "
        << NumberText(drift.centre.alarm_spreads) << " spreads; fit alarm at Page-Hinkley "
        << NumberText(drift.fit.lambda) << "; novelty alarm at "
        << NumberText(drift.novelty.alarm_ratio) << "x the baseline rate; flow alarm at "
        << NumberText(drift.flow.alarm_ratio * 100) << " % of the baseline sample volume\n";
  }

  const AlertOptions& alerts = config.alerts;
  out << "alerts: " << alerts.dir << " (raise after " << alerts.raise_after << ", resolve after "
      << alerts.resolve_after << " evaluations, cool-down " << NumberText(alerts.cooldown_seconds)
      << " s); hook: " << (alerts.hook_command.empty() ? "none" : QuotedText(alerts.hook_command))
      << "\n";
  if (!alerts.alertmanager.url.empty()) {
    out << "alert forwarding: " << alerts.alertmanager.url << "/api/v2/alerts (re-sent every "
        << NumberText(alerts.alertmanager.resend_seconds) << " s while active, retried up to every "
        << NumberText(alerts.alertmanager.max_retry_seconds) << " s)\n";
  }
  out << "state: " << config.state.dir << " (checkpoint at least every "
      << NumberText(config.state.checkpoint_seconds) << " s; "
      << (config.state.start_fresh_if_unreadable ? "starts fresh" : "refuses to start")
      << " if no checkpoint is readable)\n";
  out << "api: http on " << config.api.listen << ", writes "
      << (config.api.token_file.empty() ? "refused (no token_file)"
                                        : "need the token in " + config.api.token_file)
      << "\n";
  out << "logging: " << config.logging.level << "\n";
  return out.str();
}

nlohmann::json ConfigToJson(const Config& config) {
  const InputOptions& in = config.input;
  const ModelOptions& model = config.model;
  const DriftOptions& drift = config.drift;
  nlohmann::json features = nlohmann::json::array();
  for (const FeatureSpec& spec : config.features.features) {
    features.push_back({{"column", spec.column}, {"transform", TransformWord(spec.transform)}});
  }
  return {
      {"station", config.station},
      {"input",
       {{"time_column", in.time_column},
        {"sample_column", in.sample_column},
        {"volume_column", in.volume_column},
        {"default_volume_ml", in.default_volume_ml},
        {"delimiter", std::string(1, in.delimiter)},
        {"drop_dir", in.drop_dir},
        {"done_dir", in.done_dir},
        {"quarantine_dir", in.quarantine_dir},
        {"settle_seconds", in.settle_seconds},
        {"rescan_seconds", in.rescan_seconds},
        {"watch", WatchModeWord(in.watch)},
        {"file_suffix", in.file_suffix},
        {"max_tracked_files", in.max_tracked_files},
        {"max_bad_row_fraction", in.max_bad_row_fraction},
        {"max_line_bytes", in.max_line_bytes},
        {"max_file_bytes", in.max_file_bytes},
        {"socket",
         {{"listen", in.socket.listen},
          {"unix_path", in.socket.unix_path},
          {"max_connections", in.socket.max_connections},
          {"max_queued_records", in.socket.max_queued_records},
          {"max_queued_bytes", in.socket.max_queued_bytes},
          {"max_pending_reply_bytes", in.socket.max_pending_reply_bytes},
          {"reply_linger_seconds", in.socket.reply_linger_seconds}}}}},
      {"features", features},
      {"standardize", config.features.standardize},
      {"model",
       {{"k", model.k == 0 ? nlohmann::json("auto") : nlohmann::json(model.k)},
        {"k_range", {model.k_min, model.k_max}},
        {"k_rule", KSelectionRuleWord(model.k_rule)},
        {"warmup_particles", model.warmup_particles},
        {"restarts", model.restarts},
        {"max_iterations", model.max_iterations},
        {"batch_size", model.batch_size},
        {"half_life_particles", model.half_life_particles},
        {"half_life_seconds", model.half_life_seconds},
        {"novelty_quantile", model.novelty_quantile},
        {"novelty_buffer", model.novelty_buffer},
        {"seed", model.seed},
        {"silhouette_sample", model.silhouette_sample}}},
      {"counts",
       {{"bin_seconds", config.counts.bin_seconds},
        {"output_dir", config.counts.output_dir},
        {"retained_bins", config.counts.retained_bins},
        {"bin_close_lag_seconds", config.counts.bin_close_lag_seconds},
        {"retained_samples", config.counts.retained_samples},
        {"open_count_files", config.counts.open_count_files}}},
      {"drift",
       {{"enabled", drift.enabled},
        {"evaluate_every_particles", drift.evaluate_every_particles},
        {"composition",
         {{"window_particles", drift.composition.window_particles},
          {"alpha", drift.composition.alpha},
          {"warn_jsd", drift.composition.warn_jsd},
          {"alarm_jsd", drift.composition.alarm_jsd}}},
        {"centre",
         {{"warn_spreads", drift.centre.warn_spreads},
          {"alarm_spreads", drift.centre.alarm_spreads},
          {"common_fraction", drift.centre.common_fraction},
          {"same_direction_cosine", drift.centre.same_direction_cosine}}},
        {"fit",
         {{"delta", drift.fit.delta},
          {"lambda", drift.fit.lambda},
          {"alpha", drift.fit.alpha},
          {"min_particles", drift.fit.min_particles}}},
        {"novelty",
         {{"window_particles", drift.novelty.window_particles},
          {"alpha", drift.novelty.alpha},
          {"warn_ratio", drift.novelty.warn_ratio},
          {"alarm_ratio", drift.novelty.alarm_ratio},
          {"min_baseline_rate", drift.novelty.min_baseline_rate},
          {"birth_min_particles", drift.novelty.birth_min_particles}}},
        {"flow",
         {{"baseline_samples", drift.flow.baseline_samples},
          {"window_samples", drift.flow.window_samples},
          {"warn_ratio", drift.flow.warn_ratio},
          {"alarm_ratio", drift.flow.alarm_ratio}}}}},
      {"alerts",
       {{"dir", config.alerts.dir},
        {"raise_after", config.alerts.raise_after},
        {"resolve_after", config.alerts.resolve_after},
        {"cooldown_seconds", config.alerts.cooldown_seconds},
        {"hook_command", config.alerts.hook_command},
        {"hook_timeout_seconds", config.alerts.hook_timeout_seconds},
        {"recent_kept", config.alerts.recent_kept},
        {"alertmanager",
         {{"url", config.alerts.alertmanager.url},
          {"resend_seconds", config.alerts.alertmanager.resend_seconds},
          {"timeout_seconds", config.alerts.alertmanager.timeout_seconds},
          {"max_retry_seconds", config.alerts.alertmanager.max_retry_seconds},
          {"max_pending_alerts", config.alerts.alertmanager.max_pending_alerts}}}}},
      {"state",
       {{"dir", config.state.dir},
        {"checkpoint_seconds", config.state.checkpoint_seconds},
        {"start_fresh_if_unreadable", config.state.start_fresh_if_unreadable},
        {"max_checkpoint_bytes", config.state.max_checkpoint_bytes}}},
      {"api",
       {{"listen", config.api.listen},
        {"token_file", config.api.token_file},
        {"max_body_bytes", config.api.max_body_bytes},
        {"max_header_bytes", config.api.max_header_bytes},
        {"max_connections", config.api.max_connections},
        {"request_timeout_seconds", config.api.request_timeout_seconds}}},
      {"logging", {{"level", config.logging.level}}},
  };
}

}  // namespace seston
