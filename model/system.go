package model

import "fmt"

// Pos is a position in a model file: the file name, and the line and column
// (both counting from 1, columns in runes) of the thing the user can fix.
type Pos struct {
	File string
	Line int
	Col  int
}

// String prints the position as file:line:col, the form editors jump to.
func (p Pos) String() string {
	switch {
	case p.File == "" && p.Line == 0:
		return "-"
	case p.Line == 0:
		return p.File
	}
	return fmt.Sprintf("%s:%d:%d", p.File, p.Line, p.Col)
}

// System is a model after expansion: every set, for-family and define is
// unrolled into scalar symbols and scalar equations, every number is in
// coherent SI, and every equation has passed the dimensional check.
//
// It is the contract between model and the packages that compute with it
// (jacobian, solve, interact). Those packages never see YAML or units; they
// see slots: unknown j is x[j], parameter k is p[k].
type System struct {
	Name  string // the model's name
	About string // the model's about paragraph
	File  string // the file it was loaded from, for messages

	Unknowns []Symbol // the solver's x vector, in this order
	Params   []Symbol // parameters, inputs and disturbances: the p vector

	// Inputs and Disturbances index into Params, in declaration order: the
	// columns of the gain matrix and of the disturbance-gain matrix.
	Inputs       []int
	Disturbances []int

	Equations []Equation // as many rows as the residual vector
	Outputs   []Output   // the rows of the gain matrix, in declaration order
	Defines   []Output   // every scalar define, for reports (not unknowns)

	Envelope []Axis // default sweep axes, in file order

	Constants map[string]float64 // the constants as expanded (after overrides)
	Warnings  []Warning          // things check reports without failing, in file order

	Checks []Check // range checks to evaluate after solving, in file order

	index map[string]slot // name -> slot, for Lookup; nil until needed
}

// Role says what a symbol is in the model.
type Role int

const (
	RoleUnknown     Role = iota // a variable the solver finds
	RoleParameter               // a fixed parameter
	RoleInput                   // a manipulated variable, held while solving
	RoleDisturbance             // a parameter that moves in operation
)

func (r Role) String() string {
	switch r {
	case RoleUnknown:
		return "unknown"
	case RoleParameter:
		return "parameter"
	case RoleInput:
		return "input"
	case RoleDisturbance:
		return "disturbance"
	}
	return fmt.Sprintf("Role(%d)", int(r))
}

// Symbol is one scalar quantity after expansion: x[21], F, L.
//
// Value, Min, Max and Span are in coherent SI. Value is the nominal value of
// a parameter or input and the solver's starting guess of an unknown. Min and
// Max are -Inf and +Inf when not given; Span is 0 when not given. Span is a
// difference (no affine offset).
type Symbol struct {
	Name  string // full name with indices: "x[21]", "F"
	Base  string // family name without indices: "x"
	Index []int  // indices, empty for a scalar
	Role  Role

	Value    float64
	Min, Max float64
	Span     float64

	Unit Unit   // the declared display unit
	Note string // free text from the file
	Pos  Pos    // where it is declared
}

// Unit is the declared unit of a symbol as the numerical packages need it:
// the text to print, and how to get from a value in that unit to SI.
// SI = value*Scale + Offset for absolute values; a difference (a gain, a
// span) converts with Scale alone. Offset is non-zero only for affine units
// (degC, degF, barg, ...).
type Unit struct {
	Text   string  // as declared, "" when dimensionless
	Dim    string  // the SI dimension, readable: "kg/s", "" when dimensionless
	Scale  float64 // factor to SI (1 for SI units and dimensionless)
	Offset float64 // affine offset to SI, 0 for most units
}

// ToSI converts an absolute value in the unit to SI.
func (u Unit) ToSI(v float64) float64 { return v*u.scale() + u.Offset }

// FromSI converts an absolute SI value to the unit.
func (u Unit) FromSI(v float64) float64 { return (v - u.Offset) / u.scale() }

func (u Unit) scale() float64 {
	if u.Scale == 0 {
		return 1
	}
	return u.Scale
}

// DiffScale is the factor from a difference in the unit to a difference in
// SI: the Scale without the offset (1 when unset).
func (u Unit) DiffScale() float64 { return u.scale() }

// Equation is one scalar balance: Residual = lhs - rhs, in SI.
type Equation struct {
	Name     string // "tray[5]", "total"
	Residual Node
	Pos      Pos // the equation's formula in the file
}

// Output is a named scalar quantity computed from the solution: an output
// (a row of the gain matrix) or a define.
type Output struct {
	Name string // "top", "y[3]"
	Expr Node   // in SI
	Unit Unit   // display unit
	Span float64
	Pos  Pos
}

// Axis is one axis of a sweep: the parameter (an index into System.Params)
// and its range in SI.
type Axis struct {
	Param  int
	From   float64
	To     float64
	Points int
	Log    bool // logarithmic spacing
	Pos    Pos
}

// Warning is a finding that does not stop the run (an unused parameter, an
// output that no input moves).
type Warning struct {
	Pos Pos
	Msg string
}

func (w Warning) String() string { return w.Pos.String() + ": warning: " + w.Msg }

// Node is a node of the expanded expression tree. The tree is closed: the
// only node types are the ones in this file, and every pass over it is one
// type switch that panics on anything else.
//
// Nodes may be shared: a define used in several equations is one subtree
// referenced from each. Passes may memoise by pointer identity.
type Node interface {
	At() Pos
}

// Const is a number, already in SI.
type Const struct {
	Pos   Pos
	Value float64
}

// Var is unknown x[Index] (an index into System.Unknowns).
type Var struct {
	Pos   Pos
	Index int
}

// Param is parameter p[Index] (an index into System.Params).
type Param struct {
	Pos   Pos
	Index int
}

// Op is an arithmetic operator.
type Op byte

const (
	OpAdd Op = '+'
	OpSub Op = '-'
	OpMul Op = '*'
	OpDiv Op = '/'
	OpPow Op = '^'
)

// Neg is unary minus.
type Neg struct {
	Pos Pos
	X   Node
}

// Binary is L Op R.
type Binary struct {
	Pos  Pos // the operator token
	Op   Op
	L, R Node
}

// Func is one of the callable functions of the model format.
type Func string

const (
	FnExp   Func = "exp"
	FnLog   Func = "log" // natural logarithm
	FnLog10 Func = "log10"
	FnSqrt  Func = "sqrt"
	FnAbs   Func = "abs"
	FnMin   Func = "min" // two or more arguments
	FnMax   Func = "max" // two or more arguments
	FnPow   Func = "pow" // pow(a, b) = a^b
)

// Call is Fn(Args...).
type Call struct {
	Pos  Pos // the function name
	Fn   Func
	Args []Node
}

func (n *Const) At() Pos  { return n.Pos }
func (n *Var) At() Pos    { return n.Pos }
func (n *Param) At() Pos  { return n.Pos }
func (n *Neg) At() Pos    { return n.Pos }
func (n *Binary) At() Pos { return n.Pos }
func (n *Call) At() Pos   { return n.Pos }

// Check is a named range check on a quantity, evaluated after solving: a
// value outside [Min, Max] is worth a warning (a correlation used outside
// its valid range, say). Min and Max are in SI, -Inf and +Inf when not given.
type Check struct {
	Name     string // "antoine_benzene", "tray_T[3]"
	Expr     Node   // in SI
	Min, Max float64
	Unit     Unit // display unit
	Note     string
	Pos      Pos
}
