#pragma once
// QA across wells for one synoptic event, before contouring.
//
// In:  one head per well for the event (the contourable reading nearest to
//      the event's centre within its window), with the well's position,
//      aquifer, nest and screen.
// Out: per well: a local planar prediction from its nearest neighbours in
//      the same aquifer (leave-one-out, weighted least squares of a plane,
//      up to 8 neighbours) and the misfit; flags:
//        neighbour-misfit    |misfit| > max(tolerance, 3 sigma of misfit);
//                            worst first, each flagged well then left out of
//                            its neighbours' fits (as iterative data snooping)
//        mp-sigma-large      the head's sigma against its nearest neighbour
//                            (shared errors cancel: common_error.hpp)
//                            exceeds a third of their difference: the
//                            contour there says nothing
//        multiple-aquifers   an aquifer label naming more than one unit
//                            ('+' or ';'): left out of per-unit contouring
//      per nest, between consecutive screens (shallow to deep):
//        dh = head(shallow) - head(deep) (m); dh > 0: downward flow.
//      Misfits and nest differences are differences of heads: their sigmas
//      leave out the errors the heads share.
// Units: m. Errors: none (wells that cannot be checked are marked so).

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/common_error.hpp"

namespace levelhead {

struct EventHead {
  std::string well, aquifer, nest, time;
  double x = 0.0, y = 0.0;
  double head = 0.0, sigma = 0.0;       // m; sigma of the absolute head
  std::optional<double> screen_middle;  // m below ground
  std::vector<CommonError> common;      // the parts of sigma other heads may share
  std::string network_point;            // the adjusted point its measuring point is; empty: none
};

struct EventCheck {
  std::optional<double> prediction, misfit;  // m
  std::vector<std::string> flags;
};

struct NestPair {
  std::string nest, shallow, deep;
  double dh = 0.0, sigma = 0.0;  // m
  std::string direction;         // downward, upward
  bool significant = false;      // |dh| > 2 sigma
};

struct EventQaOptions {
  // m, smallest misfit ever flagged: heads depart from a local plane by
  // centimetres to decimetres in ordinary aquifers (common practice; set it
  // from the site's own scatter)
  double neighbour_tolerance = 0.10;
  std::size_t neighbours = 8;
  // Covariance of two heads' measuring points beyond their shared errors
  // (m^2), e.g. of points adjusted in one levelling network, by their
  // network points (EventHead::network_point, both non-empty); unset: none.
  std::function<double(const std::string&, const std::string&)> network_covariance;
};

// Covariance of heads a and b (m^2): a's variance when `same`, else their
// shared errors plus the network covariance of their measuring points.
double head_covariance(const EventHead& a, const EventHead& b, bool same,
                       const EventQaOptions& options);

// Variance of the difference of two heads (m^2): what they share cancels.
double difference_variance(const EventHead& a, const EventHead& b,
                           const EventQaOptions& options = {});

struct EventQaResult {
  std::vector<EventCheck> wells;  // in input order
  std::vector<NestPair> nests;
};

EventQaResult check_event(const std::vector<EventHead>& heads, const EventQaOptions& options);

}  // namespace levelhead
