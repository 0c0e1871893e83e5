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
// Method: near-minimum cycle basis. Spurs are pruned, chains of degree-2
// points collapsed into single edges, the shortest cycle through every
// remaining edge found (Dijkstra in the graph without that edge), and the
// candidates taken shortest first while independent over GF(2) (a subset of
// Horton's candidate set: Horton 1987, "A polynomial-time algorithm to find
// the shortest cycle basis of a graph", SIAM J. Comput. 16(2)). If they do
// not span the cycle space, fundamental cycles of a shortest-path tree fill
// the rest.

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
  // Horton's exact minimum basis has about (junctions x chains) candidate
  // loops; beyond this many the shortest loop through each chain is used
  // (not proven minimum). 6e6 takes a 40 x 40 mesh with diagonals (1600
  // points, 3570 sections) in about 2 s and 0.3 GB (tests/bench/bench_loops).
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
  // True: a minimum-length loop basis (Horton's method); false: the shortest
  // loop through each chain, for networks too large for it (short, not
  // proven minimum).
  bool minimum_basis = false;
};

LoopResult find_loops(const Network& network, const LoopOptions& options);

// "A>B>C>A"
std::string loop_point_list(const Network& network, const Loop& loop);

}  // namespace levelhead
