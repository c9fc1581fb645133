// Package interact screens multiloop control structures on steady-state gain
// matrices: the relative gain array (square and non-square), the Niederlinski
// index, singular values and condition numbers (plain and minimised over
// diagonal scalings), element sensitivity, integrity of every subset of loops,
// relative disturbance gains, a static decoupler, and the enumeration and
// ranking of input-output pairings with reasons an engineer can paste into a
// design note. It also computes gain matrices from a model's Jacobian by the
// implicit-function theorem.
//
// Analyze screens one gain set; an Analyzer screens one after another (the
// points of an operating-envelope sweep) with the same numbers, reusing its
// storage so that a 2x2 analysis allocates nothing.
//
// Every function works on gonum mat matrices. Rows are outputs, columns are
// inputs (or disturbances). Functions never print; bad data comes back as an
// error value, wrong shapes (a programmer's mistake) panic.
//
// # Pairing screens and score
//
// A pairing assigns each output one input (Pairing[i] is the input of output
// i). Analyze evaluates every pairing (all n! for n <= MaxEnumerate, the best
// ones by an assignment formulation for larger n) with these screens, where
// λ is the relative gain of a paired element, NI the Niederlinski index of the
// paired plant and β a relative disturbance gain. Thresholds are our defaults
// (common practice, adjustable in Thresholds):
//
//   - Rejected: a paired λ < 0 (the loop's gain changes sign when the other
//     loops close); a paired gain of zero; NI < 0 for n >= 3 (integral
//     control in every loop is unstable whatever the tuning; for n = 2,
//     NI = 1/λ11 so the λ screen already covers it).
//   - Caution: a paired λ below LambdaLow (0.5) or above LambdaHigh (4); an
//     integrity failure (with some loops in manual, the loops left in
//     automatic have NI < 0 or a negative paired λ); a relative disturbance
//     gain |β| above RDGHigh (4); for n >= 3 a positive NI below NISmall
//     (0.1); and, for every pairing alike, a minimised condition number above
//     CondHigh (50), which says the gain matrix itself is close to singular.
//   - Recommended: no caution and every paired λ within [0.67, 1.5].
//   - Acceptable: no caution, but some paired λ outside [0.67, 1.5].
//
// The score of a pairing P is
//
//	score = ||Λ - P||_sum + 2 × (number of pairing-specific cautions)
//
// where ||Λ - P||_sum is the RGA number (sum of absolute elements) and P the
// pairing's permutation matrix. Lower is better. Results are sorted with
// rejected pairings after all others, then by score, then lexicographically
// on the pairing, so equal inputs always give the same order.
//
// Every result is a steady-state screen; see Caution.
package interact

// Caution accompanies every recommendation the package makes.
const Caution = "Steady-state screening result: confirm by dynamic analysis and review under local codes and licensed engineering practice (for example IEC 61511 for safety functions)."
