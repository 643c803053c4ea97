#include "counts/count_book.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <string>

namespace seston {
namespace {

using counts_internal::BinChunk;
using counts_internal::kBinsPerChunk;

constexpr int kFormat = 1;

std::int64_t ChunkKey(std::int64_t index) {
  std::int64_t key = index / kBinsPerChunk;
  if (index % kBinsPerChunk < 0) --key;  // floor division for indices before 1970
  return key;
}

// The chunk, copied first when a snapshot still shares it, so that the caller may change it.
BinChunk& OwnedChunk(std::shared_ptr<BinChunk>& chunk) {
  if (!chunk) {
    chunk = std::make_shared<BinChunk>();
  } else if (chunk.use_count() > 1) {
    chunk = std::make_shared<BinChunk>(*chunk);
  } else {
    // A count of 1 was left by the last snapshot's release (an acq_rel decrement); the
    // fence orders that reader's last reads before our writes.
    std::atomic_thread_fence(std::memory_order_acquire);
  }
  return *chunk;
}

void AddClusterCount(std::vector<ClusterCount>& clusters, std::uint32_t id, std::uint64_t count) {
  auto it =
      std::lower_bound(clusters.begin(), clusters.end(), id,
                       [](const ClusterCount& c, std::uint32_t v) { return c.cluster_id < v; });
  if (it != clusters.end() && it->cluster_id == id) {
    it->count += count;
  } else {
    clusters.insert(it, {id, count});
  }
}

void AddBin(BinCounts& into, const BinCounts& add) {
  for (const ClusterCount& cluster : add.clusters) {
    AddClusterCount(into.clusters, cluster.cluster_id, cluster.count);
  }
  into.unclassified += add.unclassified;
  into.rejected += add.rejected;
  into.volume_ml += add.volume_ml;
}

bool IsEmpty(const BinCounts& bin) {
  return bin.clusters.empty() && bin.unclassified == 0 && bin.rejected == 0 && bin.volume_ml == 0;
}

std::map<std::uint32_t, std::uint64_t> WithoutZeros(
    const std::map<std::uint32_t, std::uint64_t>& counts) {
  std::map<std::uint32_t, std::uint64_t> out;
  for (const auto& [id, count] : counts) {
    if (count != 0) out.emplace(id, count);
  }
  return out;
}

// [[id, count], ...]
nlohmann::json CountsToJson(const std::map<std::uint32_t, std::uint64_t>& counts) {
  nlohmann::json out = nlohmann::json::array();
  for (const auto& [id, count] : counts) out.push_back({id, count});
  return out;
}

std::map<std::uint32_t, std::uint64_t> CountsFromJson(const nlohmann::json& in) {
  std::map<std::uint32_t, std::uint64_t> counts;
  for (const auto& pair : in)
    counts[pair.at(0).get<std::uint32_t>()] = pair.at(1).get<std::uint64_t>();
  return counts;
}

// [index, volume_ml, unclassified, rejected, [id, count, id, count, ...]]: compact, since a
// checkpoint holds up to retained_bins of these.
nlohmann::json BinToJson(const BinCounts& bin, double bin_seconds) {
  nlohmann::json clusters = nlohmann::json::array();
  for (const ClusterCount& cluster : bin.clusters) {
    clusters.push_back(cluster.cluster_id);
    clusters.push_back(cluster.count);
  }
  return nlohmann::json::array({BinIndexOf(bin.start_seconds, bin_seconds), bin.volume_ml,
                                bin.unclassified, bin.rejected, std::move(clusters)});
}

std::pair<std::int64_t, BinCounts> BinFromJson(const nlohmann::json& in, double bin_seconds) {
  std::pair<std::int64_t, BinCounts> out;
  out.first = in.at(0).get<std::int64_t>();
  BinCounts& bin = out.second;
  bin.start_seconds = BinStartOf(out.first, bin_seconds);
  bin.volume_ml = in.at(1).get<double>();
  bin.unclassified = in.at(2).get<std::uint64_t>();
  bin.rejected = in.at(3).get<std::uint64_t>();
  const nlohmann::json& clusters = in.at(4);
  for (std::size_t i = 0; i + 1 < clusters.size(); i += 2) {
    AddClusterCount(bin.clusters, clusters[i].get<std::uint32_t>(),
                    clusters[i + 1].get<std::uint64_t>());
  }
  return out;
}

nlohmann::json SampleToJson(const SampleTally& sample) {
  nlohmann::json by_bin = nlohmann::json::array();
  for (const auto& [start, tally] : sample.by_bin) {
    by_bin.push_back({start, tally.rejected, CountsToJson(tally.by_cluster)});
  }
  return {{"sample_id", sample.sample_id},         {"source", sample.source},
          {"first_seconds", sample.first_seconds}, {"last_seconds", sample.last_seconds},
          {"volume_ml", sample.volume_ml},         {"by_cluster", CountsToJson(sample.by_cluster)},
          {"rejected", sample.rejected},           {"by_bin", std::move(by_bin)}};
}

SampleTally SampleFromJson(const nlohmann::json& in) {
  SampleTally sample;
  sample.sample_id = in.at("sample_id").get<std::string>();
  sample.source = in.at("source").get<std::string>();
  sample.first_seconds = in.at("first_seconds").get<double>();
  sample.last_seconds = in.at("last_seconds").get<double>();
  sample.volume_ml = in.at("volume_ml").get<double>();
  sample.by_cluster = CountsFromJson(in.at("by_cluster"));
  sample.rejected = in.at("rejected").get<std::uint64_t>();
  for (const auto& entry : in.at("by_bin")) {
    BinTally& tally = sample.by_bin[entry.at(0).get<double>()];
    tally.rejected = entry.at(1).get<std::uint64_t>();
    tally.by_cluster = CountsFromJson(entry.at(2));
  }
  return sample;
}

std::string Describe(const SampleTally& sample) {
  return "sample \"" + sample.sample_id + "\" of " + sample.source;
}

}  // namespace

nlohmann::json SampleTallyToJson(const SampleTally& sample) { return SampleToJson(sample); }

SampleTally SampleTallyFromJson(const nlohmann::json& state) { return SampleFromJson(state); }

Result<CountBook> CountBook::Create(const CountsOptions& options) {
  if (!std::isfinite(options.bin_seconds) || !(options.bin_seconds > 0)) {
    return Status::InvalidArgument(
        "counts.bin_seconds must be a finite number of seconds > 0, got " +
        std::to_string(options.bin_seconds));
  }
  if (!std::isfinite(options.bin_close_lag_seconds) || options.bin_close_lag_seconds < 0) {
    return Status::InvalidArgument(
        "counts.bin_close_lag_seconds must be a finite number of seconds >= 0, got " +
        std::to_string(options.bin_close_lag_seconds));
  }
  if (options.retained_bins < 1) {
    return Status::InvalidArgument("counts.retained_bins must be at least 1, got 0");
  }
  if (options.retained_samples < 1) {
    return Status::InvalidArgument("counts.retained_samples must be at least 1, got 0");
  }
  return CountBook(options);
}

double CountBook::BinStart(double seconds) const {
  return BinStartOf(BinIndexOf(seconds, options_.bin_seconds), options_.bin_seconds);
}

Status CountBook::AddSample(const SampleTally& sample) {
  const double bin_seconds = options_.bin_seconds;
  if (!std::isfinite(sample.volume_ml) || sample.volume_ml < 0) {
    return Status::InvalidArgument(Describe(sample) +
                                   ": volume_ml must be a finite number of mL >= 0, got " +
                                   std::to_string(sample.volume_ml));
  }
  if (!std::isfinite(sample.first_seconds) || !std::isfinite(sample.last_seconds) ||
      sample.last_seconds < sample.first_seconds) {
    return Status::InvalidArgument(Describe(sample) +
                                   ": first_seconds and last_seconds must be finite with first "
                                   "<= last, got " +
                                   std::to_string(sample.first_seconds) + " and " +
                                   std::to_string(sample.last_seconds));
  }

  std::map<std::int64_t, BinCounts> contributions;  // by bin index
  std::map<std::uint32_t, std::uint64_t> bins_by_cluster;
  std::uint64_t bins_rejected = 0;
  for (const auto& [key, tally] : sample.by_bin) {
    if (!std::isfinite(key)) {
      return Status::InvalidArgument(Describe(sample) + ": a by_bin key is not a finite time");
    }
    BinCounts& contribution = contributions[BinIndexOf(key, bin_seconds)];
    for (const auto& [id, count] : tally.by_cluster) {
      if (count == 0) continue;
      bins_by_cluster[id] += count;
      if (id == 0) {
        contribution.unclassified += count;
      } else {
        AddClusterCount(contribution.clusters, id, count);
      }
    }
    contribution.rejected += tally.rejected;
    bins_rejected += tally.rejected;
  }
  if (bins_by_cluster != WithoutZeros(sample.by_cluster)) {
    return Status::InvalidArgument(Describe(sample) +
                                   ": by_bin does not add up to by_cluster; every particle must "
                                   "be in exactly one bin");
  }
  if (bins_rejected > sample.rejected) {
    return Status::InvalidArgument(Describe(sample) + ": by_bin holds " +
                                   std::to_string(bins_rejected) + " rejected rows, the sample " +
                                   std::to_string(sample.rejected));
  }

  std::uint64_t accepted = 0;
  for (const auto& [id, count] : sample.by_cluster) accepted += count;
  const std::int64_t first_index = BinIndexOf(sample.first_seconds, bin_seconds);
  if (accepted == 0) {
    contributions[first_index].volume_ml = sample.volume_ml;
  } else {
    for (auto& [index, contribution] : contributions) {
      // Multiply first: 3 mL * 20 / 30 is exactly 2, 3 mL * (20 / 30) is not.
      contribution.volume_ml = sample.volume_ml * static_cast<double>(contribution.accepted()) /
                               static_cast<double>(accepted);
    }
  }
  if (sample.rejected > bins_rejected) {
    contributions[first_index].rejected += sample.rejected - bins_rejected;
  }

  for (auto& [index, contribution] : contributions) {
    if (IsEmpty(contribution)) continue;
    contribution.start_seconds = BinStartOf(index, bin_seconds);
    AddBin(MutableBin(index), contribution);
    auto [pending, created] = pending_.try_emplace(index);
    if (created) pending->second.start_seconds = contribution.start_seconds;
    AddBin(pending->second, contribution);
  }
  current_.samples_.push_back(std::make_shared<const SampleTally>(sample));
  while (current_.samples_.size() > options_.retained_samples) current_.samples_.pop_front();
  if (!(sample.last_seconds <= current_.latest_event_seconds_)) {  // also replaces NaN
    current_.latest_event_seconds_ = sample.last_seconds;
  }
  EnforceRetention();
  return Status::Ok();
}

BinCounts& CountBook::MutableBin(std::int64_t index) {
  BinChunk& chunk = OwnedChunk(current_.chunks_[ChunkKey(index)]);
  const double start = BinStartOf(index, options_.bin_seconds);
  auto it = std::lower_bound(chunk.bins.begin(), chunk.bins.end(), start,
                             [](const BinCounts& bin, double s) { return bin.start_seconds < s; });
  if (it == chunk.bins.end() || it->start_seconds != start) {
    it = chunk.bins.insert(it, BinCounts{});
    it->start_seconds = start;
    ++current_.bin_count_;
  }
  return *it;
}

void CountBook::EnforceRetention() {
  while (current_.bin_count_ > options_.retained_bins) {
    auto oldest = current_.chunks_.begin();
    BinChunk& chunk = OwnedChunk(oldest->second);
    std::size_t excess = current_.bin_count_ - options_.retained_bins;
    std::size_t drop = std::min(excess, chunk.bins.size());
    chunk.bins.erase(chunk.bins.begin(), chunk.bins.begin() + static_cast<std::ptrdiff_t>(drop));
    current_.bin_count_ -= drop;
    if (chunk.bins.empty()) current_.chunks_.erase(oldest);
  }
}

std::shared_ptr<const CountBookSnapshot> CountBook::Snapshot() const {
  return std::make_shared<const CountBookSnapshot>(current_);
}

std::vector<BinCounts> CountBook::TakeClosedBins() {
  std::vector<BinCounts> closed;
  const double latest = current_.latest_event_seconds_;
  auto it = pending_.begin();
  // The close time grows with the start, so the closed bins are a prefix of pending_.
  while (it != pending_.end() &&
         it->second.start_seconds + options_.bin_seconds + options_.bin_close_lag_seconds <=
             latest) {
    closed.push_back(std::move(it->second));
    it = pending_.erase(it);
  }
  return closed;
}

std::vector<BinCounts> CountBook::TakeAllPendingBins() {
  std::vector<BinCounts> all;
  all.reserve(pending_.size());
  for (auto& [index, bin] : pending_) all.push_back(std::move(bin));
  pending_.clear();
  return all;
}

nlohmann::json CountBook::ToJson() const {
  const double bin_seconds = options_.bin_seconds;
  nlohmann::json bins = nlohmann::json::array();
  for (const auto& [key, chunk] : current_.chunks_) {
    for (const BinCounts& bin : chunk->bins) bins.push_back(BinToJson(bin, bin_seconds));
  }
  nlohmann::json pending = nlohmann::json::array();
  for (const auto& [index, bin] : pending_) pending.push_back(BinToJson(bin, bin_seconds));
  nlohmann::json samples = nlohmann::json::array();
  for (const auto& sample : current_.samples_) samples.push_back(SampleToJson(*sample));
  nlohmann::json latest = nullptr;
  if (!std::isnan(current_.latest_event_seconds_)) latest = current_.latest_event_seconds_;
  return {
      {"format", kFormat},       {"bin_seconds", bin_seconds},    {"latest_event_seconds", latest},
      {"bins", std::move(bins)}, {"pending", std::move(pending)}, {"samples", std::move(samples)}};
}

Result<CountBook> CountBook::FromJson(const nlohmann::json& state, const CountsOptions& options) {
  SESTON_ASSIGN_OR_RETURN(CountBook book, Create(options));
  try {
    if (state.at("format").get<int>() != kFormat) {
      return Status::Corruption("counts state has format " + state.at("format").dump() +
                                ", this build reads format " + std::to_string(kFormat));
    }
    const double saved_bin_seconds = state.at("bin_seconds").get<double>();
    if (saved_bin_seconds != options.bin_seconds) {
      return Status::FailedPrecondition(
          "counts state was made with counts.bin_seconds = " +
          nlohmann::json(saved_bin_seconds).dump() + ", the configuration now says " +
          nlohmann::json(options.bin_seconds).dump() +
          "; bins cannot be re-cut: restore with the old value or start with fresh state");
    }
    for (const auto& entry : state.at("bins")) {
      auto [index, bin] = BinFromJson(entry, options.bin_seconds);
      book.MutableBin(index) = std::move(bin);
    }
    for (const auto& entry : state.at("pending")) {
      auto [index, bin] = BinFromJson(entry, options.bin_seconds);
      book.pending_[index] = std::move(bin);
    }
    for (const auto& entry : state.at("samples")) {
      book.current_.samples_.push_back(std::make_shared<const SampleTally>(SampleFromJson(entry)));
    }
    const nlohmann::json& latest = state.at("latest_event_seconds");
    if (!latest.is_null()) book.current_.latest_event_seconds_ = latest.get<double>();
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("counts state is malformed: ") + error.what());
  }
  while (book.current_.samples_.size() > options.retained_samples) {
    book.current_.samples_.pop_front();
  }
  book.EnforceRetention();
  return book;
}

}  // namespace seston
