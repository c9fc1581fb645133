package jacobian

import (
	"fmt"
	"testing"

	"github.com/loopwright/loopwright/model"
)

// sharedOps builds an invented system in which, for every op with a tangent
// rule, a value of one unknown made with that op is shared by two
// equations (so it is preaccumulated), and one value of two unknowns by
// three. The inner argument a = x0*p0 + 0.7 keeps logs and roots defined
// near the guess; abs, sqrt and the power 2.5 also see x0*p0 itself, which
// the bit test drives to 0 (x0 = 0), where the tangent is not finite and
// the full sweep must decide.
func sharedOps() *model.System {
	b := &builder{file: "shared.yaml", line: 1}
	x0, x1, x2 := b.x(0), b.x(1), b.x(2)
	p0 := b.p(0)
	a := b.add(b.mul(x0, p0), b.num(0.7))
	bare := b.mul(x0, p0)
	vals := []struct {
		name string
		s    model.Node
	}{
		{"add", b.add(b.mul(a, b.num(2)), a)},
		{"sub", b.sub(b.num(3), b.mul(a, a))},
		{"mul", b.mul(a, b.add(x0, b.num(1.5)))},
		{"div", b.div(b.mul(p0, a), b.add(b.num(1), a))},
		{"neg", b.neg(b.mul(a, x0))},
		{"square", b.pow(a, b.num(2))},
		{"power", b.pow(a, b.num(-1.7))},
		{"power of 0", b.pow(bare, b.num(2.5))},
		{"varying power", b.call(model.FnPow, a, b.add(x0, p0))},
		{"exp", b.call(model.FnExp, a)},
		{"log", b.call(model.FnLog, a)},
		{"log10", b.call(model.FnLog10, a)},
		{"sqrt", b.call(model.FnSqrt, a)},
		{"sqrt of 0", b.call(model.FnSqrt, bare)},
		{"abs", b.call(model.FnAbs, b.sub(a, b.num(1)))},
		{"abs of 0", b.call(model.FnAbs, bare)},
	}
	sys := &model.System{
		Name:     "shared",
		File:     "shared.yaml",
		Unknowns: unknowns("x0", "x1", "x2"),
		Params:   []model.Symbol{{Name: "p0", Role: model.RoleParameter, Value: 1.3}},
	}
	for _, v := range vals {
		sys.Equations = append(sys.Equations,
			model.Equation{Name: v.name + " 1", Residual: b.sub(b.mul(v.s, x1), x2), Pos: b.pos()},
			model.Equation{Name: v.name + " 2", Residual: b.add(x1, b.div(v.s, b.add(x2, b.num(2)))), Pos: b.pos()})
	}
	// Two unknowns, three uses: exp(x0*x1)*x1/(x1 + 0.5) - x0.
	two := b.sub(b.div(b.mul(b.call(model.FnExp, b.mul(x0, x1)), x1), b.add(x1, b.num(0.5))), x0)
	for i := range 3 {
		sys.Equations = append(sys.Equations, model.Equation{
			Name: fmt.Sprint("two unknowns ", i), Residual: b.mul(two, b.add(x2, b.num(float64(i)))), Pos: b.pos(),
		})
	}
	return sys
}

// steps counts the reverse steps of rc, lane by lane.
func steps(rc revCode) int { return len(rc.lanes) }

// TestPreaccumulated checks that the cost rule picks what it should: each
// shared value of sharedOps, and on the column template each stage's V*y[i]
// (y = alpha x/(1+(alpha-1)x), two uses each, for stages 1..40), halving
// the reverse steps; and that the
// derivatives agree with central differences.
func TestPreaccumulated(t *testing.T) {
	f, err := model.LoadFile("../library/templates/column.yaml")
	if err != nil {
		t.Fatal(err)
	}
	column, err := f.Expand(nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name     string
		sys      *model.System
		wantPre  int     // values preaccumulated
		maxSteps float64 // of the full x sweep's steps
	}{
		{"sharedOps", sharedOps(), 16 + 1, 0.9},
		{"column.yaml", column, 40, 0.5},
	} {
		t.Run(c.name, func(t *testing.T) {
			prog := mustCompile(t, c.sys)
			rev := prog.eqRev
			if rev.tan == nil {
				t.Fatal("nothing preaccumulated")
			}
			full, pre := steps(rev.x), steps(rev.xPre)
			if rev.npre != c.wantPre {
				t.Errorf("%d values preaccumulated, want %d", rev.npre, c.wantPre)
			}
			if float64(pre) > c.maxSteps*float64(full) {
				t.Errorf("%d reverse steps with preaccumulation, %d without: want at most %.0f %%", pre, full, 100*c.maxSteps)
			}
			x, p := guess(c.sys)
			checkAgainstFD(t, prog, x, p, 1e-6)
		})
	}
}
