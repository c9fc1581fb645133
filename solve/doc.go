// Package solve finds the steady operating point of a model: the x with
// F(x) = 0, where F is the residual of the model's equations.
//
// Newton is damped Newton's method: each step solves J d = -F with the
// sparse LU of solve/sparse, then backtracks along d until the merit
// ½‖F_s‖² (F_s: residuals divided by equation scales) drops enough (the
// Armijo test). Unknowns are scaled by their typical sizes for the step
// test, and steps are cut to 0.995 of the distance to a bound so that bounds
// are never crossed. When the system decomposes (solve/structure finds its
// strongly connected blocks in block lower-triangular order) the blocks are
// solved one after another first. When plain Newton fails, a Newton
// homotopy H(x, t) = F(x) - (1-t) F(x₀) is followed from t = 0 (solved by
// the guess) to t = 1 with adaptive steps, and the end point is polished by
// Newton.
//
// Everything is in coherent SI; the package never prints. A failure is a
// *NotConverged naming the equations with the largest residuals, the
// unknowns involved and what to check.
package solve
