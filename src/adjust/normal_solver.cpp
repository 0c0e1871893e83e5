#include "adjust/normal_solver.hpp"

#include <cholmod.h>
#include <dlfcn.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <exception>
#include <mutex>
#include <thread>

#include "levelhead/core/errors.hpp"

namespace levelhead::detail {

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// OpenBLAS, Debian's usual BLAS behind CHOLMOD, keeps its threads spinning
// for a while after every threaded call. On factorisations of a few
// billion flops a second thread saves little time and the spinning doubles
// the CPU spent (bench_epochs at 1e4 points: 0.62 against 0.34 CPU s); on the
// largest it saves 5-25 % of the factorisation (bench_adjust, 1e6-point
// mesh, 2.26e10 flops). So BLAS gets the cores only above this many flops.
constexpr double threaded_factor_flops = 1e10;

// Sets OpenBLAS's thread count when OpenBLAS is the BLAS in use (found by
// name at run time; with another BLAS nothing is done).
void set_blas_threads(int threads) {
  using Setter = void (*)(int);
  static const auto setter =
      reinterpret_cast<Setter>(::dlsym(RTLD_DEFAULT, "openblas_set_num_threads"));
  if (setter) setter(threads);
}

// CHOLMOD reports through a global callback; keep the last message to report
// it through our own errors instead of letting CHOLMOD print.
thread_local std::string last_cholmod_message;
void remember_cholmod_error(int status, const char* file, int line, const char* message) {
  last_cholmod_message = fmt::format("CHOLMOD status {} ({}:{}): {}", status, file ? file : "?",
                                     line, message ? message : "");
}

}  // namespace

struct NormalSolver::Cholmod {
  cholmod_common common{};
  cholmod_factor* factor = nullptr;
  Cholmod() {
    cholmod_start(&common);
    common.print = 0;
    common.error_handler = remember_cholmod_error;
  }
  ~Cholmod() {
    if (factor) cholmod_free_factor(&factor, &common);
    cholmod_finish(&common);
  }
};

NormalSolver::NormalSolver(const LowerMatrix& lower, const SolverLimits& limits)
    : cholmod_(std::make_unique<Cholmod>()), n_(static_cast<int>(lower.rows())) {
  cholmod_common& c = cholmod_->common;
  if (!lower.isCompressed()) throw std::logic_error("NormalSolver needs a compressed matrix");

  cholmod_sparse view{};
  view.nrow = view.ncol = static_cast<std::size_t>(n_);
  view.nzmax = static_cast<std::size_t>(lower.nonZeros());
  view.p = const_cast<int*>(lower.outerIndexPtr());
  view.i = const_cast<int*>(lower.innerIndexPtr());
  view.x = const_cast<double*>(lower.valuePtr());
  view.stype = -1;  // lower triangle holds the matrix
  view.itype = CHOLMOD_INT;
  view.xtype = CHOLMOD_REAL;
  view.dtype = CHOLMOD_DOUBLE;
  view.sorted = 1;
  view.packed = 1;

  switch (limits.layout) {
    case FactorLayout::automatic:
      c.supernodal = CHOLMOD_AUTO;
      break;
    case FactorLayout::simplicial:
      c.supernodal = CHOLMOD_SIMPLICIAL;
      break;
    case FactorLayout::supernodal:
      c.supernodal = CHOLMOD_SUPERNODAL;
      break;
  }
  auto start = std::chrono::steady_clock::now();
  cholmod_->factor = cholmod_analyze(&view, &c);
  figures_.analyse_seconds = seconds_since(start);
  if (!cholmod_->factor)
    throw ComputationError("symbolic analysis failed: " + last_cholmod_message);
  figures_.factor_nonzeros = c.lnz;
  figures_.factor_flops = c.fl;
  if (c.lnz > limits.max_factor_nonzeros) {
    throw ComputationError(fmt::format(
        "the network's normal matrix would need a factor with {:.3g} nonzeros (about {:.1f} GB "
        "with "
        "the sigmas), above the limit of {:.3g}. Long lines crossing a dense mesh cause this fill; "
        "adjust the network in parts, or raise the limit if the machine has the memory",
        c.lnz, c.lnz * 20e-9, limits.max_factor_nonzeros));
  }

  start = std::chrono::steady_clock::now();
  set_blas_threads(c.fl >= threaded_factor_flops
                       ? static_cast<int>(std::max(1u, std::thread::hardware_concurrency()))
                       : 1);
  const int ok = cholmod_factorize(&view, cholmod_->factor, &c);
  figures_.supernodal = cholmod_->factor->is_super != 0;
  if (!ok || c.status == CHOLMOD_NOT_POSDEF) {
    throw ComputationError(
        "the normal matrix is not positive definite: some heights are not determined by the "
        "observations and known heights (a datum defect), or the weights span too many orders of "
        "magnitude. " +
        last_cholmod_message);
  }
  // A simplicial factor is taken as LDL' with sorted, packed columns, the
  // layout of the column-by-column selected inverse; a supernodal one stays
  // as CHOLMOD made it (L L', dense blocks).
  if (!figures_.supernodal &&
      !cholmod_change_factor(CHOLMOD_REAL, 0, 0, 1, 1, cholmod_->factor, &c)) {
    throw ComputationError("factor conversion failed: " + last_cholmod_message);
  }
  figures_.factor_seconds = seconds_since(start);

  const cholmod_factor* L = cholmod_->factor;
  const double* Lx = static_cast<const double*>(L->x);
  double d_min = INFINITY, d_max = 0.0;
  const auto take_pivot = [&](double d) {
    d_min = std::min(d_min, d);
    d_max = std::max(d_max, d);
  };
  if (figures_.supernodal) {
    const int* super = static_cast<const int*>(L->super);
    const int* pi = static_cast<const int*>(L->pi);
    const int* px = static_cast<const int*>(L->px);
    supernode_of_.resize(static_cast<std::size_t>(n_));
    for (int s = 0; s < static_cast<int>(L->nsuper); ++s) {
      const int rows = pi[s + 1] - pi[s];
      for (int k = super[s]; k < super[s + 1]; ++k) {
        supernode_of_[static_cast<std::size_t>(k)] = s;
        const double l_kk = Lx[px[s] + (k - super[s]) * (rows + 1)];
        take_pivot(l_kk * l_kk);
      }
    }
  } else {
    const int* Lp = static_cast<const int*>(L->p);
    for (int j = 0; j < n_; ++j) take_pivot(Lx[Lp[j]]);
  }
  figures_.pivot_ratio = n_ > 0 ? d_min / d_max : 1.0;
  // A genuine datum defect leaves a pivot at rounding level (about 1e-16 of
  // the largest); well-posed levelling nets stay far above 1e-12 even with
  // weights spanning six orders of magnitude.
  if (n_ > 0 && !(figures_.pivot_ratio > 1e-12)) {
    throw ComputationError(fmt::format(
        "the normal matrix is numerically singular (smallest/largest pivot = {:.2g}): some heights "
        "are not determined by the observations and known heights (a datum defect), or weights "
        "span too many orders of magnitude",
        figures_.pivot_ratio));
  }

  position_.assign(static_cast<std::size_t>(n_), 0);
  const int* perm = static_cast<const int*>(L->Perm);
  for (int k = 0; k < n_; ++k) position_[static_cast<std::size_t>(perm[k])] = k;
}

NormalSolver::~NormalSolver() = default;

Eigen::VectorXd NormalSolver::solve(const Eigen::VectorXd& rhs) {
  const auto start = std::chrono::steady_clock::now();
  cholmod_common& c = cholmod_->common;
  cholmod_dense b{};
  b.nrow = static_cast<std::size_t>(n_);
  b.ncol = 1;
  b.nzmax = b.nrow;
  b.d = b.nrow;
  b.x = const_cast<double*>(rhs.data());
  b.xtype = CHOLMOD_REAL;
  b.dtype = CHOLMOD_DOUBLE;
  cholmod_dense* x = cholmod_solve(CHOLMOD_A, cholmod_->factor, &b, &c);
  if (!x) throw ComputationError("solve failed: " + last_cholmod_message);
  Eigen::VectorXd out = Eigen::Map<const Eigen::VectorXd>(static_cast<double*>(x->x), n_);
  cholmod_free_dense(&x, &c);
  figures_.solve_seconds += seconds_since(start);
  return out;
}

// Selected inversion of N = L D L' by the Takahashi recurrences
// (Takahashi, Fagan & Chin 1973, "Formation of a sparse bus impedance matrix
// and its application to short circuit study"; see also Erisman & Tinney 1975):
//   Z_jj = 1/D_j - sum_{k>j} L_kj Z_kj,   Z_ij = - sum_{k>j} L_kj Z_ik  (i > j),
// with i, k running over the structure of column j of L. Columns are taken
// from last to first; every Z_ik needed lies in column min(i,k) of the
// pattern (the structure of column j is a clique of the filled graph), and
// is found by scattering column j's rows into a position map and walking
// column k once, so no searching is needed.
void NormalSolver::invert_simplicial() {
  const cholmod_factor* L = cholmod_->factor;
  const int* Lp = static_cast<const int*>(L->p);
  const int* Li = static_cast<const int*>(L->i);
  const int* Lnz = static_cast<const int*>(L->nz);
  const double* Lx = static_cast<const double*>(L->x);
  inverse_.assign(static_cast<std::size_t>(Lp[n_]), 0.0);
  double* Z = inverse_.data();

  std::vector<int> slot(static_cast<std::size_t>(n_), -1);  // row -> index within column j
  std::vector<double> acc;
  for (int j = n_ - 1; j >= 0; --j) {
    const int begin = Lp[j] + 1;  // first off-diagonal entry; Lp[j] is D_j
    const int end = Lp[j] + Lnz[j];
    const int m = end - begin;
    acc.assign(static_cast<std::size_t>(m), 0.0);
    for (int q = 0; q < m; ++q) slot[static_cast<std::size_t>(Li[begin + q])] = q;
    for (int q = 0; q < m; ++q) {
      const int k = Li[begin + q];
      const double l_kj = Lx[begin + q];
      acc[static_cast<std::size_t>(q)] += l_kj * Z[Lp[k]];  // Z_kk
      // Off-diagonal entries of column k of Z: Z_rk for r > k.
      for (int e = Lp[k] + 1; e < Lp[k] + Lnz[k]; ++e) {
        const int s = slot[static_cast<std::size_t>(Li[e])];
        if (s < 0) continue;
        acc[static_cast<std::size_t>(s)] += l_kj * Z[e];           // Z_rk L_kj into row r
        acc[static_cast<std::size_t>(q)] += Lx[begin + s] * Z[e];  // Z_kr L_rj into row k
      }
    }
    double diagonal = 1.0 / Lx[Lp[j]];
    for (int q = 0; q < m; ++q) {
      Z[begin + q] = -acc[static_cast<std::size_t>(q)];
      diagonal += Lx[begin + q] * acc[static_cast<std::size_t>(q)];
      slot[static_cast<std::size_t>(Li[begin + q])] = -1;
    }
    Z[Lp[j]] = diagonal;
  }
}

namespace {

// CHOLMOD's supernodal factor as the selected inversion reads it, and the
// blocks of Z = N^-1 it writes (same layout as the factor's values).
struct SupernodalFactor {
  const int* super;      // first column of each supernode; super[nsuper] = n
  const int* pi;         // start of each supernode's row list in row_index
  const int* px;         // start of each supernode's block in values
  const int* row_index;  // sorted rows of each supernode: its columns, then those below
  const double* values;  // column-major blocks, rows x columns each
  const std::vector<int>& supernode_of;
  double* inverse;
};

struct InversionWorkspace {
  Eigen::MatrixXd y, z_rr, z_rj, l_inverse;
  std::vector<int> position_in_group;  // row of R -> row of the group's supernode block
};

// One supernode of the supernodal selected inversion (Lin, Yang, Meza, Lu,
// Ying & E 2011, "SelInv: an algorithm for selected inversion of a sparse
// symmetric matrix", ACM TOMS 37(4), eq. 2.6-2.8), on N = L L'. For
// supernode J with columns J and the rows R below its diagonal block,
//   Y    = L_RJ L_JJ^-1,
//   Z_RJ = -Z_RR Y,
//   Z_JJ = L_JJ^-T L_JJ^-1 - Y' Z_RJ.
// R is a clique of the filled graph, so every entry of Z_RR lies in the
// blocks of J's ancestors in the supernodal elimination tree, which must be
// done. Z_RR is gathered into a dense matrix, group by group of the rows of
// R that are columns of one supernode, with one merge of the sorted row
// lists per group; the products are dense (level-3) kernels.
void invert_supernode(const SupernodalFactor& f, int s, InversionWorkspace& w) {
  using Matrix = Eigen::MatrixXd;
  using ConstBlock = Eigen::Map<const Matrix>;
  const int columns = f.super[s + 1] - f.super[s];
  const int rows = f.pi[s + 1] - f.pi[s];
  const int below = rows - columns;
  const ConstBlock block(f.values + f.px[s], rows, columns);
  const auto l_jj = block.topRows(columns).triangularView<Eigen::Lower>();
  w.l_inverse.setIdentity(columns, columns);
  l_jj.solveInPlace(w.l_inverse);
  Eigen::Map<Matrix> z_block(f.inverse + f.px[s], rows, columns);
  if (below == 0) {
    z_block.noalias() = w.l_inverse.transpose() * w.l_inverse;
    return;
  }
  w.y = block.bottomRows(below);
  l_jj.solveInPlace<Eigen::OnTheRight>(w.y);
  w.z_rr.resize(below, below);
  const int* r = f.row_index + f.pi[s] + columns;
  w.position_in_group.resize(static_cast<std::size_t>(below));
  for (int a = 0; a < below;) {
    const int t = f.supernode_of[static_cast<std::size_t>(r[a])];
    const int t_rows = f.pi[t + 1] - f.pi[t];
    const int* t_row = f.row_index + f.pi[t];
    // Rows of R from a on, found in supernode t's sorted row list.
    int p = r[a] - f.super[t];
    for (int q = a; q < below; ++q) {
      while (p < t_rows && t_row[p] != r[q]) ++p;
      if (p == t_rows)
        throw std::logic_error("supernodal factor without the filled graph's cliques");
      w.position_in_group[static_cast<std::size_t>(q)] = p;
    }
    const ConstBlock z_t(f.inverse + f.px[t], t_rows, f.super[t + 1] - f.super[t]);
    int b = a;
    for (; b < below && r[b] < f.super[t + 1]; ++b) {
      const int local_column = r[b] - f.super[t];
      for (int q = b; q < below; ++q)
        w.z_rr(q, b) = z_t(w.position_in_group[static_cast<std::size_t>(q)], local_column);
    }
    a = b;
  }
  w.z_rj.noalias() = -(w.z_rr.selfadjointView<Eigen::Lower>() * w.y);
  z_block.bottomRows(below) = w.z_rj;
  z_block.topRows(columns).noalias() = w.l_inverse.transpose() * w.l_inverse;
  z_block.topRows(columns).noalias() -= w.y.transpose() * w.z_rj;
}

// Below this many factor entries the inversion takes milliseconds and
// threads would cost more than they save.
constexpr std::size_t parallel_inversion_entries = 200000;

}  // namespace

// Supernodes are inverted from the roots of the supernodal elimination tree
// down: a supernode is ready once its parent is done, and ready supernodes
// are independent, so the machine's cores take them from one shared list
// (last in, first out: a core tends to stay in one subtree). Every block is
// computed by the same operations whatever the order, so the result does not
// depend on the number of threads.
void NormalSolver::invert_supernodal() {
  const cholmod_factor* L = cholmod_->factor;
  inverse_.assign(L->xsize, 0.0);
  const SupernodalFactor f{static_cast<const int*>(L->super),
                           static_cast<const int*>(L->pi),
                           static_cast<const int*>(L->px),
                           static_cast<const int*>(L->s),
                           static_cast<const double*>(L->x),
                           supernode_of_,
                           inverse_.data()};
  const int n_super = static_cast<int>(L->nsuper);

  // The supernodal elimination tree: a supernode's parent holds its first row below.
  std::vector<int> child_start(static_cast<std::size_t>(n_super) + 1, 0), children;
  std::vector<int> ready;
  const auto parent = [&](int s) {
    const int first_below = f.pi[s] + (f.super[s + 1] - f.super[s]);
    return first_below < f.pi[s + 1]
               ? supernode_of_[static_cast<std::size_t>(f.row_index[first_below])]
               : -1;
  };
  for (int s = 0; s < n_super; ++s) {
    const int p = parent(s);
    if (p < 0)
      ready.push_back(s);
    else
      ++child_start[static_cast<std::size_t>(p) + 1];
  }
  for (int s = 0; s < n_super; ++s) child_start[s + 1] += child_start[s];
  children.resize(static_cast<std::size_t>(child_start[n_super]));
  {
    std::vector<int> next(child_start.begin(), child_start.end() - 1);
    for (int s = 0; s < n_super; ++s) {
      const int p = parent(s);
      if (p >= 0) children[static_cast<std::size_t>(next[p]++)] = s;
    }
  }

  std::mutex mutex;
  std::condition_variable changed;
  int done = 0;
  std::exception_ptr failure;
  const auto work = [&] {
    InversionWorkspace workspace;
    while (true) {
      int s = -1;
      {
        std::unique_lock lock(mutex);
        changed.wait(lock, [&] { return !ready.empty() || done == n_super || failure; });
        if (ready.empty() || failure) return;
        s = ready.back();
        ready.pop_back();
      }
      try {
        invert_supernode(f, s, workspace);
      } catch (...) {
        const std::lock_guard lock(mutex);
        failure = std::current_exception();
        changed.notify_all();
        return;
      }
      {
        const std::lock_guard lock(mutex);
        ++done;
        ready.insert(ready.end(), children.begin() + child_start[s],
                     children.begin() + child_start[s + 1]);
      }
      changed.notify_all();
    }
  };
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  const unsigned threads = L->xsize < parallel_inversion_entries ? 1u : std::min(cores, 8u);
  figures_.inverse_threads = threads;
  std::vector<std::thread> helpers;
  for (unsigned t = 1; t < threads; ++t) helpers.emplace_back(work);
  work();
  for (std::thread& helper : helpers) helper.join();
  if (failure) std::rethrow_exception(failure);
}

void NormalSolver::compute_selected_inverse() {
  const auto start = std::chrono::steady_clock::now();
  if (figures_.supernodal)
    invert_supernodal();
  else
    invert_simplicial();
  figures_.inverse_seconds = seconds_since(start);
}

double NormalSolver::inverse_entry(int i, int j) const {
  int a = position_[static_cast<std::size_t>(i)];
  int b = position_[static_cast<std::size_t>(j)];
  if (a > b) std::swap(a, b);
  return figures_.supernodal ? supernodal_entry(a, b) : simplicial_entry(a, b);
}

// Z_ba (a <= b, permuted) from the block of a's supernode: row b is either
// one of the supernode's own columns or in its sorted list of rows below.
double NormalSolver::supernodal_entry(int a, int b) const {
  const cholmod_factor* L = cholmod_->factor;
  const int* super = static_cast<const int*>(L->super);
  const int* pi = static_cast<const int*>(L->pi);
  const int* px = static_cast<const int*>(L->px);
  const int* row_index = static_cast<const int*>(L->s);
  const int s = supernode_of_[static_cast<std::size_t>(a)];
  const int rows = pi[s + 1] - pi[s];
  const int columns = super[s + 1] - super[s];
  int row = b - super[s];
  if (row >= columns) {
    const int* first = row_index + pi[s] + columns;
    const int* last = row_index + pi[s + 1];
    const int* found = std::lower_bound(first, last, b);
    if (found == last || *found != b) {
      throw std::logic_error("inverse_entry asked for an entry outside the factor's pattern");
    }
    row = static_cast<int>(found - (row_index + pi[s]));
  }
  return inverse_[static_cast<std::size_t>(px[s] + (a - super[s]) * rows + row)];
}

double NormalSolver::simplicial_entry(int a, int b) const {
  const cholmod_factor* L = cholmod_->factor;
  const int* Lp = static_cast<const int*>(L->p);
  const int* Li = static_cast<const int*>(L->i);
  const int* Lnz = static_cast<const int*>(L->nz);
  if (a == b) return inverse_[static_cast<std::size_t>(Lp[a])];
  const int* first = Li + Lp[a] + 1;
  const int* last = Li + Lp[a] + Lnz[a];
  const int* found = std::lower_bound(first, last, b);
  if (found == last || *found != b) {
    throw std::logic_error("inverse_entry asked for an entry outside the factor's pattern");
  }
  return inverse_[static_cast<std::size_t>(found - Li)];
}

Eigen::VectorXd NormalSolver::inverse_diagonal() const {
  Eigen::VectorXd d(n_);
  for (int i = 0; i < n_; ++i) d[i] = inverse_entry(i, i);
  return d;
}

}  // namespace levelhead::detail
