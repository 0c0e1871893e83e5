#pragma once
// What the stages of one `levelhead run` hand on in memory.
//
// Each stage the chain runs writes its files, then stores its typed result
// here. A later stage takes its input from here instead of reading back the
// file written from that result: the adjusted heights (gnss-check, heads),
// the epochs' heights of monitored points (heads) and the event's heads
// (flow). The report is built from these results alone (report.hpp). A
// command run on its own has no StageResults: its files are the interface.
//
// A result is used in place of a file only when the option names the very
// file written from it (`written_to`); any other file is read as given.
// Units: metres and seconds (UTC), as in the stages' own headers.

#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/flow/flow.hpp"
#include "levelhead/heads/head_core.hpp"
#include "levelhead/heads/heads.hpp"
#include "levelhead/heads/transducer.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/epochs.hpp"
#include "levelhead/levelling/fieldbook.hpp"
#include "levelhead/levelling/loops.hpp"
#include "levelhead/levelling/network.hpp"
#include "levelhead/references/gnss_check.hpp"

namespace levelhead {

struct FieldBookStage {
  FieldBookResult result;
  std::size_t sights = 0;
};

struct LoopsStage {
  LoopResult result;
  std::vector<std::vector<std::string>> loop_points;  // per loop: point ids, first repeated
};

struct AdjustStage {
  Network network;
  AdjustmentResult result;
  AdjustmentOptions options;
  std::filesystem::path written_to;  // heights.csv

  // The adjusted heights as `heads --adjusted` reads them from heights.csv,
  // at full precision: sigma a posteriori (none without redundancy), the
  // reference, whether a loop checks the point.
  NetworkHeights heights() const;

  // Covariances of the adjusted heights of `ids` (m^2, row-major k x k,
  // scaled as the heights' sigmas are: by sigma0^2 with redundancy); an id
  // not in the network has zeros.
  std::vector<double> covariance(const std::vector<std::string>& ids) const;
};

struct GnssStage {
  std::vector<GnssMark> marks;
  GnssCheckResult result;
  std::string gnss_reference, levelled_reference;
};

struct EpochsStage {
  EpochAnalysis analysis;
  std::filesystem::path written_to;  // heights_by_epoch.csv

  // Heights of every point per epoch, as `heads --monitored` reads them.
  MonitoredHeights monitored() const;
};

struct TransducerStage {
  TransducerSummary summary;
  double gravity = 0.0;  // m/s^2 used
};

struct HeadsStage {
  HeadsResult result;
  std::string target;
  std::map<std::string, std::vector<SeriesPoint>> series;  // per well, for hydrographs
  std::filesystem::path written_to;                        // event.csv
  // The measuring points' network heights came from this chain's adjust, so
  // its covariance applies to them.
  bool network_from_chain = false;
};

struct FlowStage {
  FlowResult result;
  std::size_t wells = 0;
  std::string aquifer;                // the aquifer fitted; empty: all wells
  std::optional<double> distance;     // m, of the travel time
  std::vector<std::string> well_ids;  // of the fit, in the order of result.residuals
  double alpha0 = 0.001;              // of the tau test of each well
};

struct StageResults {
  std::optional<FieldBookStage> reduce;
  std::optional<LoopsStage> loops;
  std::optional<AdjustStage> adjust;
  std::optional<GnssStage> gnss;
  std::optional<EpochsStage> epochs;
  std::optional<TransducerStage> transducer;
  std::optional<HeadsStage> heads;
  std::optional<FlowStage> flow;
};

// True when `option_value` names the file `written_to` (the same file,
// however the path is spelt).
bool names_file(const std::string& option_value, const std::filesystem::path& written_to);

}  // namespace levelhead
