// Lyapunov exponents by QR re-orthonormalisation of tangent vectors, and the Kaplan-Yorke
// dimension of a spectrum. Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// The QR method: k tangent vectors evolved by the linearised flow are replaced, every few
// steps, by the orthonormal factor Q of their QR decomposition V = Q R; the logs of |R_ii|
// summed over a long time T and divided by T converge to the k leading exponents, in
// descending order (Benettin et al. (1980) Meccanica 15, 9 and 21; Shimada & Nagashima
// (1979) Prog. Theor. Phys. 61, 1605).
#pragma once

#include <vector>

namespace chaosweep::stats {

/// Replaces the k columns of `columns` (n x k, column-major: column j at columns + j * n,
/// k <= n) by the orthonormal factor Q of their Householder QR decomposition, with the sign of
/// each column chosen so that R_jj >= 0 (the frame then changes continuously from one call to
/// the next). Writes log|R_jj| to log_abs_r[j] (-inf for a zero diagonal entry).
/// Deterministic: the same input gives bitwise the same output. Throws std::invalid_argument
/// unless 1 <= k <= n.
void qr_renormalise(double* columns, int n, int k, double* log_abs_r);

/// The same for a batch of `width` members side by side, by modified Gram-Schmidt with one
/// re-orthogonalisation (each vector's projections on the earlier ones removed twice, then
/// normalised: orthonormal to rounding while the vectors are far from dependent, kappa well
/// below 1 / epsilon, as between the renormalisations of a run). `vectors` is SoA [k][n][width]
/// (component c of vector j of member m at vectors[(j * n + c) * width + m]); each member's k
/// vectors are replaced by their orthonormal factor Q (R_jj > 0) and log R_jj goes to
/// log_r[j * width + m] (-inf for a vanishing vector). The loops run over the members
/// innermost, so a member's result does not depend on its column or the width. `scratch`
/// holds 2 * width doubles. Throws std::invalid_argument unless 1 <= k <= n and width >= 1.
void gram_schmidt_batch(double* vectors, int n, int k, int width, double* log_r, double* scratch);

/// Kaplan-Yorke (Lyapunov) dimension of a spectrum sorted in descending order:
/// D = j + (lambda_1 + ... + lambda_j) / |lambda_{j+1}|, with j the largest index whose partial
/// sum is >= 0 (Kaplan & Yorke (1979), Lecture Notes in Mathematics 730). 0 when lambda_1 < 0.
/// NaN when the exponents given do not determine it (their total sum is >= 0, so more
/// exponents are needed; this includes an empty list) or when one of them is NaN.
/// Throws std::invalid_argument when the exponents are not in descending order.
double kaplan_yorke_dimension(const std::vector<double>& sorted_exponents);

}  // namespace chaosweep::stats
