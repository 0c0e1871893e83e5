#pragma once
// Loop closures of a levelling network, before any adjustment.
//
// In:  a Network (every section needs a length > 0) and options.
// Out: an independent set of loops, as many as the cyclomatic number
//      (sections - points + connected parts, counting only points that some
//      section touches), preferring short local loops; for each loop its
//      points in order, length (m), misclosure (m: the signed sum of dh
//      around the loop, dh taken as H(to) - H(from) when the loop runs from
//      -> to), tolerance (m: k mm * sqrt(length in km)) and verdict.
//      Also: sections in no loop (spurs, side shots and links between
//      loops: their heights are unchecked), sections observed only once
//      (no other section joins the same two points and it is not the mean of
//      repeated runs), and for each failing
//      loop the sections it shares with other failing loops.
// Errors: InputError for a section without a length (its row); OptionError
//      for a tolerance <= 0 or an unknown preset.
//
// Method: minimum-length cycle basis. Spurs are pruned, chains of degree-2
// points collapsed into single edges, and Horton's candidates (Horton 1987,
// "A polynomial-time algorithm to find the shortest cycle basis of a graph",
// SIAM J. Comput. 16(2)) of loops up to a length limit generated from every
// junction, the limit doubling until the candidates, taken shortest first
// while independent over GF(2), span the cycle space: all of Horton's
// candidates up to the limit are among them, so the basis is the minimum
// the whole set gives. Where a round would exceed max_exact_candidates, the
// short loops found so far, the shortest loop through each chain and
// fundamental loops of a shortest-path forest complete a basis that is not
// proven minimum.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "levelhead/levelling/network.hpp"
#include "levelhead/levelling/precision.hpp"

namespace levelhead {

struct LoopOptions {
  // Loop tolerance k: the loop closure of the levelling class (precision.hpp).
  double mm_per_sqrt_km = default_levelling_class().loop_closure_mm_per_sqrt_km;
  std::string levelling_class = std::string(default_levelling_class().name);  // empty: k given
  // Most candidate loops one round of the minimum basis may generate (from
  // all junctions, repeats counted) before the basis is completed without
  // proof. A 400 x 400 mesh with diagonals (367 000 sections) stays within
  // it: 11 s, 1 GB (tests/bench/bench_loops).
  double max_exact_candidates = 6e6;
  void validate() const;
};

struct LoopStep {
  std::size_t section = 0;  // index into Network::sections
  bool forward = true;      // traversed from -> to
};

struct Loop {
  std::vector<LoopStep> steps;      // in order around the loop
  std::vector<std::size_t> points;  // point indices in order, first repeated at the end
  double length = 0.0;              // m
  double misclosure = 0.0;          // m
  double tolerance = 0.0;           // m
  bool passed = true;
  // Sections of this loop that also lie in another failing loop, with those loops (0-based).
  std::vector<std::pair<std::size_t, std::vector<std::size_t>>> shared_with_failing;
};

struct LoopResult {
  std::vector<Loop> loops;
  std::size_t cyclomatic_number = 0;  // expected loop count
  std::size_t connected_parts = 0;    // among points touched by sections
  std::size_t points_in_sections = 0;
  std::vector<std::size_t> unchecked_sections;   // in no loop
  std::vector<std::size_t> single_observations;  // no other section joins the same points
  std::size_t failed = 0;
  double mm_per_sqrt_km = 0.0;
  std::string levelling_class;  // the class k came from; empty: k given
  // True: a minimum-length loop basis (Horton's method); false: completed
  // from short loops for networks too large for it (not proven minimum).
  bool minimum_basis = false;
};

LoopResult find_loops(const Network& network, const LoopOptions& options);

// "A>B>C>A"
std::string loop_point_list(const Network& network, const Loop& loop);

}  // namespace levelhead
