// Package jacobian compiles an expanded model into flat evaluation tapes that
// compute residuals in SI and their exact sparse derivatives by automatic
// differentiation.
//
// Compile turns every equation, output and define of a model.System into a
// tape: a short list of operations (load an unknown, load a parameter, a
// constant, + - * /, powers, exp, log, log10, sqrt, abs, min, max), each kept
// with the position in the model file of the formula that produced it. A
// subtree shared by pointer (a define used several times) is computed once per
// tape, and subtrees made only of constants are folded when compiling.
//
// Derivatives are exact: one forward sweep and one reverse (adjoint) sweep per
// tape give the whole row of dF/dx and dF/dp. Finite differences are provided
// only as a cross-check (JacobianFD, ParamJacobianFD).
//
// For speed the tapes are lowered before they run. Loads disappear: operands
// index one value space holding x, p and the constants. The arithmetic of all
// equations (or all outputs, ...) forms one forward program, in which a value
// several tapes compute alike is computed once, ordered by level into runs of
// the same operation. The reverse sweeps of tapes with the same sequence of
// operations run side by side, each tape with its own adjoints. None of this
// changes a number: every value and every derivative is the same operations
// in the same order as the tape evaluated on its own, to the bit.
//
// The one exception is dF/dx (Jacobian, ResidualJacobian). A value shared
// by several equations that depends on one or two unknowns (a define such
// as a tray's vapour composition) has its derivatives computed once, by
// forward-mode differentiation, and each equation's reverse sweep stops at
// it instead of walking its operations again (preaccumulation). The same
// partial derivatives are then summed in another order, so an entry may
// differ from the tape's own sweep in its last bits. Where a value or a
// derivative is not finite the full sweeps run instead, so errors are
// unchanged.
//
// A Program is immutable and may be shared by many goroutines; each goroutine
// evaluates through its own Eval, which holds the work buffers. Eval methods do
// not allocate.
//
// Non-smooth functions take one-sided derivatives: abs has derivative +1 at 0
// (the right-hand derivative); at a tie min and max follow their leftmost
// argument tied for the result.
//
// A value that is not finite (NaN or ±Inf) is reported as an *EvalError at
// the first operation that produced it, with the reason: the log of a
// non-positive value, the square root of a negative value, a division by zero,
// a negative base raised to a non-integer power, an overflow, or a derivative
// that is infinite (sqrt at 0, for instance).
package jacobian
