#include "panel_kernels.h"

#include <algorithm>
#include <cstring>
#include <utility>
#include <vector>
#ifdef _OPENMP
#include <omp.h>
#endif

// Without AVX-512 the compilers warn that passing v8d by value has another ABI than with
// it; these helpers are internal to this file (and inlined), so no call crosses that ABI.
#pragma GCC diagnostic ignored "-Wpsabi"

namespace factorwatch::engine::detail {
namespace {

// Eight doubles in one register with AVX-512, two with AVX2: GCC and Clang's vector
// extension, so that the code builds (and vectorises) without -march=native too.
using v8d = double __attribute__((vector_size(64)));

inline v8d load8(const double* p) {
  v8d v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
inline void store8(double* p, v8d v) { std::memcpy(p, &v, sizeof v); }
inline double sum8(v8d v) { return ((v[0] + v[1]) + (v[2] + v[3])) + ((v[4] + v[5]) + (v[6] + v[7])); }

// acc (N x M, column-major) += X[r0:r1]' (X[r0:r1] V) for V (N x M, column-major).
// Rows go in blocks of eight: Y_b = X_b V (two rows at a time share each load of V),
// then acc += X_b' Y_b while the block is still in L1/L2.
template <int M>
void fused_rows(const RowMatrix& X, const double* V, double* acc, Eigen::Index r0, Eigen::Index r1) {
  const Eigen::Index N = X.cols();
  const Eigen::Index N8 = N - N % 8;
  constexpr int kBlock = 8;
  double Y[kBlock][M];
  for (Eigen::Index t0 = r0; t0 < r1; t0 += kBlock) {
    const int b = int(std::min<Eigen::Index>(kBlock, r1 - t0));
    for (int t = 0; t < b; t += 2) {
      const bool two = t + 1 < b;
      const double* x0 = X.data() + (t0 + t) * N;
      const double* x1 = two ? x0 + N : x0;
      v8d a0[M], a1[M];
      for (int j = 0; j < M; ++j) a0[j] = a1[j] = v8d{};
      for (Eigen::Index i = 0; i < N8; i += 8) {
        const v8d u0 = load8(x0 + i), u1 = load8(x1 + i);
        for (int j = 0; j < M; ++j) {
          const v8d v = load8(V + j * N + i);
          a0[j] += u0 * v;
          a1[j] += u1 * v;
        }
      }
      for (int j = 0; j < M; ++j) {
        double s0 = sum8(a0[j]), s1 = sum8(a1[j]);
        for (Eigen::Index i = N8; i < N; ++i) {
          s0 += x0[i] * V[j * N + i];
          s1 += x1[i] * V[j * N + i];
        }
        Y[t][j] = s0;
        if (two) Y[t + 1][j] = s1;
      }
    }
    for (Eigen::Index i = 0; i < N8; i += 8) {
      v8d c[M];
      for (int j = 0; j < M; ++j) c[j] = load8(acc + j * N + i);
      for (int t = 0; t < b; ++t) {
        const v8d u = load8(X.data() + (t0 + t) * N + i);
        for (int j = 0; j < M; ++j) c[j] += u * Y[t][j];
      }
      for (int j = 0; j < M; ++j) store8(acc + j * N + i, c[j]);
    }
    for (Eigen::Index i = N8; i < N; ++i)
      for (int t = 0; t < b; ++t)
        for (int j = 0; j < M; ++j) acc[j * N + i] += X(t0 + t, i) * Y[t][j];
  }
}

// out.col(j)[i0:i1] = X[:, i0:i1]' U.col(j), eight assets at a time.
template <int M>
void transpose_columns(const RowMatrix& X, const Eigen::MatrixXd& U, Eigen::MatrixXd& out,
                       Eigen::Index i0, Eigen::Index i1) {
  const Eigen::Index T = X.rows(), N = X.cols();
  Eigen::Index i = i0;
  for (; i + 8 <= i1; i += 8) {
    v8d c[M];
    for (int j = 0; j < M; ++j) c[j] = v8d{};
    for (Eigen::Index t = 0; t < T; ++t) {
      const v8d u = load8(X.data() + t * N + i);
      for (int j = 0; j < M; ++j) c[j] += u * U(t, j);
    }
    for (int j = 0; j < M; ++j) store8(out.data() + j * N + i, c[j]);
  }
  for (; i < i1; ++i)
    for (int j = 0; j < M; ++j) out(i, j) = X.col(i).dot(U.col(j));
}

// Calls f.template operator()<M>() for the runtime width m in 1..kKernelMaxColumns.
template <typename F, int M = 1>
bool dispatch_width(int m, F&& f) {
  if constexpr (M > kKernelMaxColumns) {
    return false;
  } else {
    if (m == M) {
      f.template operator()<M>();
      return true;
    }
    return dispatch_width<F, M + 1>(m, std::forward<F>(f));
  }
}

struct FusedCall {
  const RowMatrix& X;
  const double* V;
  double* acc;
  Eigen::Index r0, r1;
  template <int M>
  void operator()() const { fused_rows<M>(X, V, acc, r0, r1); }
};

struct TransposeCall {
  const RowMatrix& X;
  const Eigen::MatrixXd& U;
  Eigen::MatrixXd& out;
  Eigen::Index i0, i1;
  template <int M>
  void operator()() const { transpose_columns<M>(X, U, out, i0, i1); }
};

}  // namespace

int thread_count(const RowMatrix& X) {
#ifdef _OPENMP
  if (X.size() >= kParallelEntries) return omp_get_max_threads();
#endif
  (void)X;
  return 1;
}

bool fused_gram_product(const RowMatrix& X, const Eigen::MatrixXd& V, Eigen::MatrixXd& out) {
  const int m = int(V.cols());
  if (m < 1 || m > kKernelMaxColumns) return false;
  const Eigen::Index T = X.rows(), N = X.cols();
  out.setZero(N, m);
  const int threads = thread_count(X);
  // Each thread owns a contiguous range of rows and its own accumulator; the
  // accumulators are added at the end (N x m, negligible next to the pass).
  std::vector<Eigen::MatrixXd> partial(std::size_t(std::max(0, threads - 1)));
#pragma omp parallel num_threads(threads) if (threads > 1)
  {
    int id = 0, nt = 1;
#ifdef _OPENMP
    id = omp_get_thread_num();
    nt = omp_get_num_threads();
#endif
    const Eigen::Index r0 = T * id / nt, r1 = T * (id + 1) / nt;
    Eigen::MatrixXd& acc = id == 0 ? out : partial[std::size_t(id - 1)];
    if (id != 0) acc.setZero(N, m);
    dispatch_width(m, FusedCall{X, V.data(), acc.data(), r0, r1});
  }
  for (const auto& p : partial)
    if (p.size()) out += p;
  return true;
}

bool transpose_product(const RowMatrix& X, const Eigen::MatrixXd& U, Eigen::MatrixXd& out) {
  const int m = int(U.cols());
  if (m < 1 || m > kKernelMaxColumns) return false;
  const Eigen::Index N = X.cols();
  out.resize(N, m);
  // Threads own disjoint asset ranges, so no reduction is needed.
  const Eigen::Index chunk = 256;
  const Eigen::Index chunks = (N + chunk - 1) / chunk;
#pragma omp parallel for schedule(static) num_threads(thread_count(X)) if (X.size() >= kParallelEntries)
  for (Eigen::Index c = 0; c < chunks; ++c)
    dispatch_width(m, TransposeCall{X, U, out, c * chunk, std::min(N, (c + 1) * chunk)});
  return true;
}

}  // namespace factorwatch::engine::detail
