package jacobian

import (
	"fmt"

	"github.com/loopwright/loopwright/model"
)

// builder makes expression nodes by hand for tests, giving each node its own
// position (line = the builder's line, columns counting up) so errors can be
// traced to the node that caused them.
type builder struct {
	file string
	line int
	col  int
}

func (b *builder) pos() model.Pos {
	b.col++
	return model.Pos{File: b.file, Line: b.line, Col: b.col}
}

func (b *builder) num(v float64) model.Node { return &model.Const{Pos: b.pos(), Value: v} }
func (b *builder) x(i int) model.Node       { return &model.Var{Pos: b.pos(), Index: i} }
func (b *builder) p(i int) model.Node       { return &model.Param{Pos: b.pos(), Index: i} }
func (b *builder) neg(a model.Node) model.Node {
	return &model.Neg{Pos: b.pos(), X: a}
}
func (b *builder) bin(op model.Op, l, r model.Node) model.Node {
	return &model.Binary{Pos: b.pos(), Op: op, L: l, R: r}
}
func (b *builder) add(l, r model.Node) model.Node { return b.bin(model.OpAdd, l, r) }
func (b *builder) sub(l, r model.Node) model.Node { return b.bin(model.OpSub, l, r) }
func (b *builder) mul(l, r model.Node) model.Node { return b.bin(model.OpMul, l, r) }
func (b *builder) div(l, r model.Node) model.Node { return b.bin(model.OpDiv, l, r) }
func (b *builder) pow(l, r model.Node) model.Node { return b.bin(model.OpPow, l, r) }
func (b *builder) call(fn model.Func, args ...model.Node) model.Node {
	return &model.Call{Pos: b.pos(), Fn: fn, Args: args}
}

// sum adds the terms left to right.
func (b *builder) sum(terms ...model.Node) model.Node {
	s := terms[0]
	for _, t := range terms[1:] {
		s = b.add(s, t)
	}
	return s
}

func unknowns(names ...string) []model.Symbol {
	s := make([]model.Symbol, len(names))
	for i, n := range names {
		s[i] = model.Symbol{Name: n, Base: n, Role: model.RoleUnknown, Value: 0.5}
	}
	return s
}

// binaryColumn builds the 41-stage binary column of model-format.md ("An
// indexed example", the column A data of /work/shared/checkvalues.md §2a) as
// the model loader would expand it: stage 1 is the reboiler, stage nt the
// total condenser, saturated-liquid feed on stage nf, constant molar
// overflow, constant relative volatility.
//
// Unknowns x[1..nt] are slots 0..nt-1; parameters are alpha, F, z_feed, L, V,
// flows in SI (mol/s: 1 kmol/min = 1000/60 mol/s).
func binaryColumn(nt, nf int) *model.System {
	const (
		pAlpha = iota
		pF
		pZ
		pL
		pV
	)
	b := &builder{file: "column.yaml", line: 1}
	sys := &model.System{
		Name: "binary-column",
		File: "column.yaml",
		Params: []model.Symbol{
			{Name: "alpha", Base: "alpha", Role: model.RoleParameter, Value: 1.5},
			{Name: "F", Base: "F", Role: model.RoleDisturbance, Value: 1000.0 / 60},
			{Name: "z_feed", Base: "z_feed", Role: model.RoleDisturbance, Value: 0.5},
			{Name: "L", Base: "L", Role: model.RoleInput, Value: 2706.0 / 60},
			{Name: "V", Base: "V", Role: model.RoleInput, Value: 3206.0 / 60},
		},
		Inputs:       []int{pL, pV},
		Disturbances: []int{pF, pZ},
	}
	for i := 1; i <= nt; i++ {
		sys.Unknowns = append(sys.Unknowns, model.Symbol{
			Name: fmt.Sprintf("x[%d]", i), Base: "x", Index: []int{i},
			Role: model.RoleUnknown, Value: 0.5, Min: 0, Max: 1,
		})
	}
	x := func(i int) model.Node { return b.x(i - 1) }
	// Defines, each one shared node referenced wherever it is used.
	y := make([]model.Node, nt+1)
	lliq := make([]model.Node, nt+1)
	for i := 1; i <= nt; i++ {
		y[i] = b.div(b.mul(b.p(pAlpha), x(i)),
			b.add(b.num(1), b.mul(b.sub(b.p(pAlpha), b.num(1)), x(i))))
		if i > nf {
			lliq[i] = b.p(pL)
		} else {
			lliq[i] = b.add(b.p(pL), b.p(pF))
		}
		sys.Defines = append(sys.Defines, model.Output{Name: fmt.Sprintf("y[%d]", i), Expr: y[i], Pos: b.pos()})
	}
	D := b.sub(b.p(pV), b.p(pL))
	B := b.sub(b.add(b.p(pF), b.p(pL)), b.p(pV))
	sys.Defines = append(sys.Defines,
		model.Output{Name: "D", Expr: D, Pos: b.pos()},
		model.Output{Name: "B", Expr: B, Pos: b.pos()})

	eq := func(name string, lhs, rhs model.Node) {
		b.line++
		sys.Equations = append(sys.Equations, model.Equation{Name: name, Residual: b.sub(lhs, rhs), Pos: b.pos()})
	}
	eq("reboiler", b.mul(lliq[2], x(2)), b.add(b.mul(b.p(pV), y[1]), b.mul(B, x(1))))
	for i := 2; i <= nt-1; i++ {
		lhs := b.add(b.mul(lliq[i+1], x(i+1)), b.mul(b.p(pV), y[i-1]))
		if i == nf {
			lhs = b.add(lhs, b.mul(b.p(pF), b.p(pZ)))
		} else {
			lhs = b.add(lhs, b.num(0))
		}
		eq(fmt.Sprintf("tray[%d]", i), lhs, b.add(b.mul(lliq[i], x(i)), b.mul(b.p(pV), y[i])))
	}
	eq("condenser", b.mul(b.p(pV), y[nt-1]), b.mul(b.add(b.p(pL), D), x(nt)))
	sys.Outputs = []model.Output{
		{Name: "top", Expr: x(nt), Span: 0.01, Pos: b.pos()},
		{Name: "bottom", Expr: x(1), Span: 0.01, Pos: b.pos()},
	}
	return sys
}

// multiColumn builds an invented nt-stage column separating 4 components with
// constant relative volatilities alpha = 4, 2, 1.5, 1 (constant molar
// overflow, saturated-liquid feed on stage nf). Unknowns are x[i,j] for
// j = 1..3 (slot 3*(i-1)+j-1); x[i,4] = 1 - x[i,1] - x[i,2] - x[i,3] and
// the VLE y[i,j] = alpha_j x[i,j] / sum_k alpha_k x[i,k] are shared defines.
//
// Parameters: alpha1..alpha4, F, z1..z3, L, V.
func multiColumn(nt, nf int) *model.System {
	const nc = 3 // independent components
	const (
		pA1 = 0 // alpha_j at pA1+j-1, j = 1..4
		pF  = 4
		pZ1 = 5 // z_j at pZ1+j-1, j = 1..3
		pL  = 8
		pV  = 9
	)
	b := &builder{file: "multi.yaml", line: 1}
	sys := &model.System{Name: "four-component-column", File: "multi.yaml"}
	for j, a := range []float64{4, 2, 1.5, 1} {
		sys.Params = append(sys.Params, model.Symbol{Name: fmt.Sprintf("alpha[%d]", j+1), Role: model.RoleParameter, Value: a})
	}
	sys.Params = append(sys.Params, model.Symbol{Name: "F", Role: model.RoleDisturbance, Value: 1})
	for j, z := range []float64{0.25, 0.25, 0.25} {
		sys.Params = append(sys.Params, model.Symbol{Name: fmt.Sprintf("z[%d]", j+1), Role: model.RoleDisturbance, Value: z})
	}
	sys.Params = append(sys.Params,
		model.Symbol{Name: "L", Role: model.RoleInput, Value: 3},
		model.Symbol{Name: "V", Role: model.RoleInput, Value: 3.5})
	sys.Inputs = []int{pL, pV}
	sys.Disturbances = []int{pF, pZ1, pZ1 + 1, pZ1 + 2}
	for i := 1; i <= nt; i++ {
		for j := 1; j <= nc; j++ {
			sys.Unknowns = append(sys.Unknowns, model.Symbol{
				Name: fmt.Sprintf("x[%d,%d]", i, j), Base: "x", Index: []int{i, j},
				Role: model.RoleUnknown, Value: 0.25, Min: 0, Max: 1,
			})
		}
	}
	x := make([][]model.Node, nt+1)
	y := make([][]model.Node, nt+1)
	lliq := make([]model.Node, nt+1)
	for i := 1; i <= nt; i++ {
		x[i] = make([]model.Node, nc+2)
		for j := 1; j <= nc; j++ {
			x[i][j] = b.x(nc*(i-1) + j - 1)
		}
		x[i][4] = b.sub(b.sub(b.sub(b.num(1), x[i][1]), x[i][2]), x[i][3])
		terms := make([]model.Node, 4)
		for j := 1; j <= 4; j++ {
			terms[j-1] = b.mul(b.p(pA1+j-1), x[i][j])
		}
		s := b.sum(terms...)
		y[i] = make([]model.Node, nc+1)
		for j := 1; j <= nc; j++ {
			y[i][j] = b.div(terms[j-1], s)
		}
		if i > nf {
			lliq[i] = b.p(pL)
		} else {
			lliq[i] = b.add(b.p(pL), b.p(pF))
		}
	}
	D := b.sub(b.p(pV), b.p(pL))
	B := b.sub(b.add(b.p(pF), b.p(pL)), b.p(pV))
	eq := func(name string, lhs, rhs model.Node) {
		b.line++
		sys.Equations = append(sys.Equations, model.Equation{Name: name, Residual: b.sub(lhs, rhs), Pos: b.pos()})
	}
	for j := 1; j <= nc; j++ {
		eq(fmt.Sprintf("reboiler[%d]", j), b.mul(lliq[2], x[2][j]), b.add(b.mul(b.p(pV), y[1][j]), b.mul(B, x[1][j])))
		for i := 2; i <= nt-1; i++ {
			lhs := b.add(b.mul(lliq[i+1], x[i+1][j]), b.mul(b.p(pV), y[i-1][j]))
			if i == nf {
				lhs = b.add(lhs, b.mul(b.p(pF), b.p(pZ1+j-1)))
			}
			eq(fmt.Sprintf("tray[%d,%d]", i, j), lhs, b.add(b.mul(lliq[i], x[i][j]), b.mul(b.p(pV), y[i][j])))
		}
		eq(fmt.Sprintf("condenser[%d]", j), b.mul(b.p(pV), y[nt-1][j]), b.mul(b.add(b.p(pL), D), x[nt][j]))
	}
	sys.Outputs = []model.Output{
		{Name: "top", Expr: x[nt][1], Pos: b.pos()},
		{Name: "bottom", Expr: x[1][4], Pos: b.pos()},
	}
	return sys
}

// guess returns the starting point and parameters of sys.
func guess(sys *model.System) (x, p []float64) {
	x = make([]float64, len(sys.Unknowns))
	for i, s := range sys.Unknowns {
		x[i] = s.Value
	}
	p = make([]float64, len(sys.Params))
	for i, s := range sys.Params {
		p[i] = s.Value
	}
	return x, p
}
