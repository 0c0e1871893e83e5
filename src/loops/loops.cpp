#include "levelhead/levelling/loops.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <queue>
#include <set>

#include "levelhead/core/errors.hpp"
#include "util/option_checks.hpp"
#include "util/text.hpp"

namespace levelhead {

void LoopOptions::validate() const {
  util::require_positive(mm_per_sqrt_km, "loop tolerance", "mm/sqrt(km)");
}

namespace {

constexpr std::size_t none = static_cast<std::size_t>(-1);

// A chain of sections between two junctions (or a ring back to its start).
struct Chain {
  std::size_t a = 0, b = 0;     // point indices at its ends
  std::vector<LoopStep> steps;  // in order from a to b
  double length = 0.0;
};

// A candidate loop over chains, in traversal order starting at chains[0].a.
struct Candidate {
  std::vector<std::pair<std::size_t, bool>> walk;  // chain, traversed a -> b
  std::vector<std::size_t> members;                // sorted chain ids (GF(2) vector)
  double length = 0.0;
};

std::vector<std::size_t> symmetric_difference(const std::vector<std::size_t>& x,
                                              const std::vector<std::size_t>& y) {
  std::vector<std::size_t> out;
  out.reserve(x.size() + y.size());
  std::set_symmetric_difference(x.begin(), x.end(), y.begin(), y.end(), std::back_inserter(out));
  return out;
}

// Greedy independence over GF(2): each kept vector is stored reduced, keyed
// by its largest chain id (its pivot).
class Gf2Basis {
 public:
  // Adds `members` if independent of what is kept; returns whether it was.
  bool add(std::vector<std::size_t> members) {
    while (!members.empty()) {
      const auto it = by_pivot_.find(members.back());
      if (it == by_pivot_.end()) {
        const std::size_t pivot = members.back();
        by_pivot_.emplace(pivot, std::move(members));
        return true;
      }
      members = symmetric_difference(members, it->second);
    }
    return false;
  }
  std::size_t rank() const { return by_pivot_.size(); }

 private:
  std::map<std::size_t, std::vector<std::size_t>> by_pivot_;
};

void finish_candidate(Candidate& c, const std::vector<Chain>& chains);

class ChainGraph {
 public:
  ChainGraph(std::size_t n_points, const std::vector<Chain>& chains) : chains_(chains) {
    start_.assign(n_points + 1, 0);
    for (const Chain& c : chains) ++start_[c.a + 1], ++start_[c.b + 1];
    for (std::size_t i = 0; i < n_points; ++i) start_[i + 1] += start_[i];
    incident_.resize(start_[n_points]);
    std::vector<std::size_t> fill(start_.begin(), start_.end() - 1);
    for (std::size_t e = 0; e < chains.size(); ++e) {
      incident_[fill[chains[e].a]++] = e;
      incident_[fill[chains[e].b]++] = e;
    }
    distance_.assign(n_points, INFINITY);
    via_.assign(n_points, none);
    on_path_.assign(n_points, 0);
  }

  // Shortest path from `from` to `to` avoiding chain `skip` (Dijkstra, stopped
  // when `to` is settled). Returns the chains from `from` to `to` in order, or
  // nothing when `to` cannot be reached.
  std::optional<std::vector<std::pair<std::size_t, bool>>> shortest_path(std::size_t from,
                                                                         std::size_t to,
                                                                         std::size_t skip,
                                                                         double* length) {
    using Entry = std::pair<double, std::size_t>;
    std::priority_queue<Entry, std::vector<Entry>, std::greater<>> queue;
    const auto reset = [&] {
      for (std::size_t p : touched_) distance_[p] = INFINITY, via_[p] = none;
      touched_.clear();
    };
    distance_[from] = 0.0;
    touched_.push_back(from);
    queue.emplace(0.0, from);
    bool found = false;
    while (!queue.empty()) {
      const auto [d, p] = queue.top();
      queue.pop();
      if (d > distance_[p]) continue;
      if (p == to) {
        found = true;
        break;
      }
      for (std::size_t k = start_[p]; k < start_[p + 1]; ++k) {
        const std::size_t e = incident_[k];
        if (e == skip) continue;
        const Chain& c = chains_[e];
        const std::size_t q = c.a == p ? c.b : c.a;
        const double nd = d + c.length;
        if (nd < distance_[q]) {
          if (distance_[q] == INFINITY) touched_.push_back(q);
          distance_[q] = nd;
          via_[q] = e;
          queue.emplace(nd, q);
        }
      }
    }
    if (!found) {
      reset();
      return std::nullopt;
    }
    *length = distance_[to];
    std::vector<std::pair<std::size_t, bool>> path;
    for (std::size_t p = to; p != from;) {
      const Chain& c = chains_[via_[p]];
      const bool forward = c.b == p;  // reached p by running the chain a -> b
      path.emplace_back(via_[p], forward);
      p = forward ? c.a : c.b;
    }
    std::reverse(path.begin(), path.end());
    reset();
    return path;
  }

  // Horton's candidates from `root`: for every chain (x, y) off the
  // shortest-path tree of root, the loop P(root, x) + (x, y) + P(y, root)
  // when the two paths meet only at root (Horton 1987, "A polynomial-time
  // algorithm to find the shortest cycle basis of a graph", SIAM J. Comput.
  // 16(2)). Over every root they hold a minimum cycle basis; each is added
  // to `out` once (`seen` holds their member sets). Only loops no longer
  // than `limit` (m): the tree grows no further, and since both paths of
  // such a loop are shorter than the loop, every one of them is found.
  // Returns how many candidates were generated (before removing repeats).
  std::size_t horton_candidates(std::size_t root, std::set<std::vector<std::size_t>>& seen,
                                std::vector<Candidate>& out, double limit) {
    grow_tree(
        root, [](std::size_t) {}, limit);
    std::size_t generated = 0;
    const auto parent = [&](std::size_t p) {
      const Chain& c = chains_[via_[p]];
      return c.a == p ? c.b : c.a;
    };
    // The chains that may close a loop have both ends in the tree: those met
    // from their end `a` among the points reached (work local to the tree).
    candidate_chains_.clear();
    for (std::size_t p : touched_) {
      for (std::size_t k = start_[p]; k < start_[p + 1]; ++k) {
        if (chains_[incident_[k]].a == p) candidate_chains_.push_back(incident_[k]);
      }
    }
    for (const std::size_t e : candidate_chains_) {
      const Chain& chain = chains_[e];
      const std::size_t x = chain.a, y = chain.b;
      if (x == y || distance_[x] == INFINITY || distance_[y] == INFINITY) continue;
      if (via_[x] == e || via_[y] == e) continue;  // a tree chain: no loop
      if (distance_[x] + chain.length + distance_[y] > limit) continue;
      std::vector<std::size_t> x_path;  // nodes from x up to root, root excluded
      for (std::size_t p = x; p != root; p = parent(p)) x_path.push_back(p);
      for (std::size_t p : x_path) on_path_[p] = 1;
      bool simple = true;
      for (std::size_t p = y; p != root && simple; p = parent(p)) simple = !on_path_[p];
      for (std::size_t p : x_path) on_path_[p] = 0;
      if (!simple) continue;
      Candidate c;
      // root -> x down the tree, x -> y along e, y -> root up the tree.
      for (auto it = x_path.rbegin(); it != x_path.rend(); ++it)
        c.walk.emplace_back(via_[*it], chains_[via_[*it]].b == *it);
      c.walk.emplace_back(e, true);
      for (std::size_t p = y; p != root; p = parent(p))
        c.walk.emplace_back(via_[p], chains_[via_[p]].a == p);
      finish_candidate(c, chains_);
      ++generated;
      if (seen.insert(c.members).second) out.push_back(std::move(c));
    }
    for (std::size_t p : touched_) distance_[p] = INFINITY, via_[p] = none;
    touched_.clear();
    return generated;
  }

  // Fundamental cycles of a shortest-path forest: complete a basis whatever
  // the candidates missed.
  std::vector<Candidate> fundamental_cycles() {
    const std::size_t n = distance_.size();
    std::vector<std::size_t> parent_chain(n, none), depth(n, 0);
    std::vector<char> seen(n, 0), tree_chain(chains_.size(), 0);
    for (std::size_t root = 0; root < n; ++root) {
      if (seen[root] || start_[root] == start_[root + 1]) continue;
      // One tree per connected part: its points are unreached from any
      // earlier root, so the distances need no reset in between.
      grow_tree(root, [&](std::size_t p) {
        seen[p] = 1;
        if (via_[p] == none) return;
        parent_chain[p] = via_[p];
        tree_chain[via_[p]] = 1;
        const Chain& c = chains_[via_[p]];
        depth[p] = depth[c.a == p ? c.b : c.a] + 1;
      });
    }
    const auto up = [&](std::size_t p) {
      const Chain& c = chains_[parent_chain[p]];
      return c.a == p ? c.b : c.a;
    };
    std::vector<Candidate> out;
    for (std::size_t e = 0; e < chains_.size(); ++e) {
      if (tree_chain[e]) continue;
      // Walk a -> b along e, then from b up to the common ancestor and down to a.
      std::vector<std::pair<std::size_t, bool>> from_b, from_a;
      std::size_t x = chains_[e].b, y = chains_[e].a;
      while (x != y) {
        if (depth[x] >= depth[y]) {
          const Chain& c = chains_[parent_chain[x]];
          from_b.emplace_back(parent_chain[x], c.b == x ? false : true);
          x = up(x);
        } else {
          const Chain& c = chains_[parent_chain[y]];
          from_a.emplace_back(parent_chain[y], c.b == y ? true : false);
          y = up(y);
        }
      }
      Candidate cand;
      cand.walk.emplace_back(e, true);
      for (const auto& step : from_b) cand.walk.push_back(step);
      for (auto it = from_a.rbegin(); it != from_a.rend(); ++it) cand.walk.push_back(*it);
      out.push_back(std::move(cand));
    }
    for (std::size_t p : touched_) distance_[p] = INFINITY, via_[p] = none;
    touched_.clear();
    return out;
  }

 private:
  // Shortest-path tree from `root` over every point it reaches within
  // `limit` (m) (Dijkstra, 1959): distance_ and via_ filled, touched_ naming
  // them; `settled(p)` is called once per point, in the order they are
  // settled.
  template <class Settled>
  void grow_tree(std::size_t root, Settled settled, double limit = INFINITY) {
    using Entry = std::pair<double, std::size_t>;
    std::priority_queue<Entry, std::vector<Entry>, std::greater<>> queue;
    distance_[root] = 0.0;
    touched_.push_back(root);
    queue.emplace(0.0, root);
    while (!queue.empty()) {
      const auto [d, p] = queue.top();
      queue.pop();
      if (d > distance_[p]) continue;
      settled(p);
      for (std::size_t k = start_[p]; k < start_[p + 1]; ++k) {
        const Chain& c = chains_[incident_[k]];
        const std::size_t q = c.a == p ? c.b : c.a;
        if (d + c.length < distance_[q] && d + c.length <= limit) {
          if (distance_[q] == INFINITY) touched_.push_back(q);
          distance_[q] = d + c.length;
          via_[q] = incident_[k];
          queue.emplace(distance_[q], q);
        }
      }
    }
  }

  const std::vector<Chain>& chains_;
  std::vector<std::size_t> start_, incident_;
  std::vector<double> distance_;
  std::vector<std::size_t> via_, touched_;
  std::vector<char> on_path_;                  // all 0 between calls
  std::vector<std::size_t> candidate_chains_;  // scratch of horton_candidates
};

void finish_candidate(Candidate& c, const std::vector<Chain>& chains) {
  c.length = 0.0;
  for (const auto& [chain, forward] : c.walk) {
    c.members.push_back(chain);
    c.length += chains[chain].length;
  }
  std::sort(c.members.begin(), c.members.end());
}

std::size_t find_root(std::vector<std::size_t>& parent, std::size_t x) {
  while (parent[x] != x) x = parent[x] = parent[parent[x]];
  return x;
}

}  // namespace

LoopResult find_loops(const Network& net, const LoopOptions& options) {
  options.validate();
  const std::size_t n = net.points.size(), m = net.sections.size();
  for (std::size_t s = 0; s < m; ++s) {
    if (!net.sections[s].length) {
      throw InputError(net.section_location(s), "",
                       fmt::format("section {} -> {} has no length; loop tolerances need the "
                                   "length of every section",
                                   net.sections[s].from, net.sections[s].to));
    }
  }
  const auto other_end = [&](std::size_t s, std::size_t p) {
    return net.from_index[s] == p ? net.to_index[s] : net.from_index[s];
  };

  LoopResult result;
  result.mm_per_sqrt_km = options.mm_per_sqrt_km;
  result.levelling_class = options.levelling_class;

  // Cyclomatic number = sections - points touched + connected parts.
  std::vector<std::size_t> parent(n);
  std::iota(parent.begin(), parent.end(), 0);
  std::vector<char> touched(n, 0);
  for (std::size_t s = 0; s < m; ++s) {
    touched[net.from_index[s]] = touched[net.to_index[s]] = 1;
    parent[find_root(parent, net.from_index[s])] = find_root(parent, net.to_index[s]);
  }
  for (std::size_t p = 0; p < n; ++p) {
    if (!touched[p]) continue;
    ++result.points_in_sections;
    result.connected_parts += find_root(parent, p) == p;
  }
  result.cyclomatic_number = m - result.points_in_sections + result.connected_parts;

  // Incidence lists over sections.
  std::vector<std::size_t> start(n + 1, 0);
  for (std::size_t s = 0; s < m; ++s) ++start[net.from_index[s] + 1], ++start[net.to_index[s] + 1];
  for (std::size_t p = 0; p < n; ++p) start[p + 1] += start[p];
  std::vector<std::size_t> incident(start[n]);
  {
    std::vector<std::size_t> fill(start.begin(), start.end() - 1);
    for (std::size_t s = 0; s < m; ++s) {
      incident[fill[net.from_index[s]]++] = s;
      incident[fill[net.to_index[s]]++] = s;
    }
  }

  // 1. Prune spurs: points of degree 1, repeatedly.
  std::vector<std::size_t> degree(n);
  for (std::size_t p = 0; p < n; ++p) degree[p] = start[p + 1] - start[p];
  std::vector<char> alive(m, 1);
  std::vector<std::size_t> stack;
  for (std::size_t p = 0; p < n; ++p) {
    if (degree[p] == 1) stack.push_back(p);
  }
  while (!stack.empty()) {
    const std::size_t p = stack.back();
    stack.pop_back();
    if (degree[p] != 1) continue;
    for (std::size_t k = start[p]; k < start[p + 1]; ++k) {
      const std::size_t s = incident[k];
      if (!alive[s]) continue;
      alive[s] = 0;
      --degree[p];
      const std::size_t q = other_end(s, p);
      if (--degree[q] == 1) stack.push_back(q);
      break;
    }
  }

  // 2. Collapse chains of degree-2 points into single edges.
  std::vector<Chain> chains;
  std::vector<char> assigned(m, 0);
  const auto walk_chain = [&](std::size_t from, std::size_t first_section) {
    Chain chain;
    chain.a = from;
    std::size_t p = from, s = first_section;
    while (true) {
      assigned[s] = 1;
      chain.steps.push_back({s, net.from_index[s] == p});
      chain.length += *net.sections[s].length;
      p = other_end(s, p);
      if (degree[p] != 2 || p == from) break;
      std::size_t next = none;
      for (std::size_t k = start[p]; k < start[p + 1]; ++k) {
        if (alive[incident[k]] && !assigned[incident[k]]) next = incident[k];
      }
      if (next == none) break;  // a ring closed on itself
      s = next;
    }
    chain.b = p;
    chains.push_back(std::move(chain));
  };
  for (std::size_t p = 0; p < n; ++p) {
    if (degree[p] == 0 || degree[p] == 2) continue;
    for (std::size_t k = start[p]; k < start[p + 1]; ++k) {
      if (alive[incident[k]] && !assigned[incident[k]]) walk_chain(p, incident[k]);
    }
  }
  for (std::size_t s = 0; s < m; ++s) {  // rings of degree-2 points only
    if (alive[s] && !assigned[s]) walk_chain(net.from_index[s], s);
  }

  // 3. Loops: chains closed on themselves directly; the rest from candidates.
  const std::size_t target = result.cyclomatic_number;
  std::vector<Candidate> chosen;
  Gf2Basis basis;
  const auto by_length = [](const Candidate& x, const Candidate& y) {
    return x.length != y.length ? x.length < y.length : x.members < y.members;
  };
  // Greedy over GF(2), shortest first, after the rings.
  const auto start_basis = [&] {
    chosen.clear();
    basis = Gf2Basis();
    for (std::size_t e = 0; e < chains.size(); ++e) {
      if (chains[e].a != chains[e].b) continue;
      Candidate c;
      c.walk.emplace_back(e, true);
      finish_candidate(c, chains);
      basis.add(c.members);
      chosen.push_back(std::move(c));
    }
  };
  const auto take = [&](std::vector<Candidate>& pool) {
    std::sort(pool.begin(), pool.end(), by_length);
    for (Candidate& c : pool) {
      if (chosen.size() >= target) break;
      if (basis.add(c.members)) chosen.push_back(std::move(c));
    }
  };
  ChainGraph graph(n, chains);
  std::set<std::size_t> junctions;
  for (const Chain& c : chains) junctions.insert({c.a, c.b});
  double total_length = 0.0;
  std::vector<double> lengths;
  for (const Chain& c : chains) total_length += c.length, lengths.push_back(c.length);

  // a) Horton's candidates of loops up to a length limit, from every
  // junction; the limit starts at four median chains (a mesh's square) and
  // doubles until the candidates span the cycle space. All of Horton's
  // candidates up to the limit are there, in the order greedy takes them
  // over the whole set, so a basis completed within the limit is the one
  // the whole set gives: a minimum (Horton 1987). Stopped when a round
  // would generate more than max_exact_candidates.
  std::vector<Candidate> candidates;
  start_basis();
  // Rings alone (a network of one loop, or none): nothing to choose.
  result.minimum_basis = chosen.size() == target;
  if (!lengths.empty()) {
    std::nth_element(lengths.begin(), lengths.begin() + lengths.size() / 2, lengths.end());
    double limit = 4.0 * lengths[lengths.size() / 2];
    while (chosen.size() < target) {
      std::vector<Candidate> round;
      std::set<std::vector<std::size_t>> seen;
      double generated = 0.0;
      for (std::size_t root : junctions) {
        generated += static_cast<double>(graph.horton_candidates(root, seen, round, limit));
        if (generated > options.max_exact_candidates) break;
      }
      if (generated > options.max_exact_candidates) break;
      candidates = std::move(round);
      start_basis();
      std::vector<Candidate> pool = candidates;
      take(pool);
      result.minimum_basis = chosen.size() == target;
      if (limit > total_length) break;  // every loop was a candidate
      limit *= 2.0;
    }
  }
  // b) Too large for a proven minimum: the short loops found so far, the
  // shortest loop through each chain, then fundamental loops of a
  // shortest-path forest for whatever they miss.
  if (!result.minimum_basis) {
    for (std::size_t e = 0; e < chains.size(); ++e) {
      if (chains[e].a == chains[e].b) continue;
      double path_length = 0.0;
      auto path = graph.shortest_path(chains[e].a, chains[e].b, e, &path_length);
      if (!path) continue;  // a link between loops: no cycle runs through it
      Candidate c;
      c.walk.emplace_back(e, true);
      // The path runs a -> b; the loop returns from b to a along it reversed.
      for (auto it = path->rbegin(); it != path->rend(); ++it)
        c.walk.emplace_back(it->first, !it->second);
      finish_candidate(c, chains);
      candidates.push_back(std::move(c));
    }
    start_basis();
    take(candidates);
    if (chosen.size() < target) {
      std::vector<Candidate> fundamental = graph.fundamental_cycles();
      for (Candidate& c : fundamental) finish_candidate(c, chains);
      take(fundamental);
    }
  }
  if (chosen.size() != target) {
    throw std::logic_error(
        fmt::format("loop basis has {} loops, expected {}", chosen.size(), target));
  }

  // 4. Expand chains into sections and close each loop.
  std::vector<std::vector<std::size_t>> loops_of_section(m);
  for (const Candidate& c : chosen) {
    Loop loop;
    std::size_t p =
        c.walk.front().second ? chains[c.walk.front().first].a : chains[c.walk.front().first].b;
    loop.points.push_back(p);
    for (const auto& [chain_id, forward] : c.walk) {
      const Chain& chain = chains[chain_id];
      const auto emit = [&](LoopStep step) {
        loop.steps.push_back(step);
        const Section& s = net.sections[step.section];
        loop.misclosure += step.forward ? s.dh : -s.dh;
        loop.length += *s.length;
        p = step.forward ? net.to_index[step.section] : net.from_index[step.section];
        loop.points.push_back(p);
      };
      if (forward) {
        for (const LoopStep& step : chain.steps) emit(step);
      } else {
        for (auto it = chain.steps.rbegin(); it != chain.steps.rend(); ++it) {
          emit({it->section, !it->forward});
        }
      }
    }
    loop.tolerance = options.mm_per_sqrt_km * 1e-3 * std::sqrt(loop.length / 1000.0);
    loop.passed = std::abs(loop.misclosure) <= loop.tolerance;
    result.failed += !loop.passed;
    for (const LoopStep& step : loop.steps)
      loops_of_section[step.section].push_back(result.loops.size());
    result.loops.push_back(std::move(loop));
  }

  for (Loop& loop : result.loops) {
    if (loop.passed) continue;
    for (const LoopStep& step : loop.steps) {
      std::vector<std::size_t> others;
      for (std::size_t k : loops_of_section[step.section]) {
        if (&result.loops[k] != &loop && !result.loops[k].passed) others.push_back(k);
      }
      if (!others.empty()) loop.shared_with_failing.emplace_back(step.section, std::move(others));
    }
  }
  std::map<std::pair<std::size_t, std::size_t>, std::size_t> pair_count;
  for (std::size_t s = 0; s < m; ++s) {
    pair_count[std::minmax(net.from_index[s], net.to_index[s])] +=
        static_cast<std::size_t>(net.sections[s].runs);
  }
  for (std::size_t s = 0; s < m; ++s) {
    if (loops_of_section[s].empty()) result.unchecked_sections.push_back(s);
    if (pair_count[std::minmax(net.from_index[s], net.to_index[s])] < 2) {
      result.single_observations.push_back(s);
    }
  }
  return result;
}

std::string loop_point_list(const Network& net, const Loop& loop) {
  std::string text;
  for (std::size_t k = 0; k < loop.points.size(); ++k) {
    if (k) text += '>';
    text += net.points[loop.points[k]].id;
  }
  return text;
}

}  // namespace levelhead
