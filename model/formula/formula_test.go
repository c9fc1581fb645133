package formula

import (
	"fmt"
	"strings"
	"testing"
)

// show prints a tree compactly, with each node's offset after "@".
func show(e Expr) string {
	switch e := e.(type) {
	case *Num:
		return fmt.Sprintf("%g@%d", e.Value, e.Off)
	case *Ident:
		return fmt.Sprintf("%s@%d", e.Name, e.Off)
	case *Index:
		var a []string
		for _, x := range e.Args {
			a = append(a, show(x))
		}
		return fmt.Sprintf("%s@%d[%s]", e.Name, e.Off, strings.Join(a, ","))
	case *Unary:
		return fmt.Sprintf("(%s@%d %s)", e.Op, e.Off, show(e.X))
	case *Binary:
		return fmt.Sprintf("(%s %s@%d %s)", show(e.L), e.Op, e.Off, show(e.R))
	case *Compare:
		return fmt.Sprintf("(%s %s@%d %s)", show(e.L), e.Op, e.Off, show(e.R))
	case *Logical:
		return fmt.Sprintf("(%s %s@%d %s)", show(e.L), e.Op, e.Off, show(e.R))
	case *Cond:
		return fmt.Sprintf("(%s ?@%d %s : %s)", show(e.C), e.Off, show(e.A), show(e.B))
	case *Call:
		var a []string
		for _, x := range e.Args {
			a = append(a, show(x))
		}
		return fmt.Sprintf("%s@%d(%s)", e.Fn, e.Off, strings.Join(a, ","))
	case *Sum:
		return fmt.Sprintf("sum@%d(%s in %s, %s)", e.Off, e.Loop.Var, showRange(e.Loop.Range), show(e.Body))
	}
	panic(fmt.Sprintf("unknown node %T", e))
}

func showRange(r Range) string {
	if r.Set != "" {
		return r.Set
	}
	return show(r.Lo) + ".." + show(r.Hi)
}

func TestParseExpr(t *testing.T) {
	tests := []struct {
		in, want string
	}{
		{"a +  b*c", "(a@0 +@2 (b@5 *@6 c@7))"},
		{"x[i+1]", "x@0[(i@2 +@3 1@4)]"},
		{"x[i,j]", "x@0[i@2,j@4]"},
		{"x[i, j+1]*2", "(x@0[i@2,(j@5 +@6 1@7)] *@9 2@10)"},
		{"x[i][j]", "x@0[i@2,j@5]"},
		{"a ** 2", "(a@0 ^@2 2@5)"},
		{"a ^ b ^ c", "(a@0 ^@2 (b@4 ^@6 c@8))"},
		{"-x^2", "(-@0 (x@1 ^@2 2@3))"},
		{"+x", "x@1"},
		{"i == NF ? F*z : 0", "((i@0 ==@2 NF@5) ?@2 (F@10 *@11 z@12) : 0@16)"},
		{"not (i > 1) and j < 2 || k != 3", "(((not@0 (i@5 >@7 1@9)) and@12 (j@16 <@18 2@20)) or@22 (k@25 !=@27 3@30))"},
		{"min(a, b, c)", "min@0(a@4,b@7,c@10)"},
		{"abs(x) + max(1, y)", "(abs@0(x@4) +@7 max@9(1@13,y@16))"},
		{"sum(i in stage, x[i])", "sum@0(i in stage, x@16[i@18])"},
		{"sum(j in 2..N-1, y[j])", "sum@0(j in 2@9..(N@12 -@13 1@14), y@17[j@19])"},
		{"1.5e-3 * log10(p)", "(0.0015@0 *@7 log10@9(p@15))"},
		{"i % 2", "(i@0 %@2 2@4)"},
	}
	for _, tc := range tests {
		e, err := ParseExpr(tc.in)
		if err != nil {
			t.Errorf("ParseExpr(%q): %v", tc.in, err)
			continue
		}
		if got := show(e); got != tc.want {
			t.Errorf("ParseExpr(%q)\n got %s\nwant %s", tc.in, got, tc.want)
		}
	}
}

func TestParseErrors(t *testing.T) {
	tests := []struct {
		in   string
		off  int
		want string
	}{
		{"a.b", 2, `member access "a.b" is not allowed`},
		{"'s' + 1", 0, "a string literal is not allowed"},
		{"[1, 2]", 0, "an array is not allowed"},
		{"{a: 1}", 0, "a map is not allowed"},
		{"let a = 1; a", 0, `"let" is not allowed`},
		{"a; b", 0, `";" is not allowed`},
		{"ceil(x)", 0, `function "ceil" is not allowed; the callable functions are exp, log, log10, sqrt, abs, min, max, pow and sum`},
		{"len(x)", 0, `function "len" is not allowed`},
		{"foo(x)", 0, `function "foo" is not allowed`},
		{"exp(1, 2)", 0, "exp takes 1 argument, got 2"},
		{"max(1)", 0, "max takes two or more arguments, got 1"},
		{"pow(2)", 0, "pow takes 2 arguments, got 1"},
		{"sum(x)", 0, "sum takes two arguments"},
		{"sum(x, y)", 0, "sum needs an index first"},
		{"true ? 1 : 2", 0, "true/false are not allowed"},
		{"x in y", 2, `"in" is only allowed`},
		{"1..3", 1, `a range "a..b" is only allowed`},
		{"x[1:2]", 0, "slices x[a:b] are not allowed"},
		{"a ?? b", 2, `operator "??" is not allowed`},
		{"a +", 2, "unexpected token EOF"},
		{"x + exp", 4, "exp is a function"},
		{"x[i,j", 4, "unexpected token EOF"},
		{strings.Repeat("(1+", 300) + "1" + strings.Repeat(")", 300), 0, "nested too deeply"},
		{strings.Repeat("a", MaxLen+1), 0, "characters long; the limit is"},
	}
	for _, tc := range tests {
		_, err := ParseExpr(tc.in)
		fe, ok := err.(*Error)
		if !ok {
			t.Errorf("ParseExpr(%.20q) error %v (%T), want *Error", tc.in, err, err)
			continue
		}
		if !strings.Contains(fe.Msg, tc.want) || (tc.off > 0 && fe.Off != tc.off) {
			t.Errorf("ParseExpr(%.20q) = %d: %s\nwant %d: ...%s...", tc.in, fe.Off, fe.Msg, tc.off, tc.want)
		}
	}
}

func TestParseEquation(t *testing.T) {
	tests := []struct {
		in       string
		lhs, rhs string
		eq       int
		err      string
	}{
		{in: "f_out = f_conc + f_water", lhs: "f_out@0", rhs: "(f_conc@8 +@15 f_water@17)", eq: 6},
		{in: "x[i] == 1 ? a : b = c", lhs: "((x@0[i@2] ==@5 1@8) ?@5 a@12 : b@16)", rhs: "c@20", eq: 18},
		{in: "a <= b = c", lhs: "(a@0 <=@2 b@5)", rhs: "c@9", eq: 7},
		{in: "x + 1", err: `no "=" found`},
		{in: "a = b = c", err: `found a second one here`},
		{in: " = b", err: "left side"},
		{in: "a = ", err: "right side"},
		{in: "a = b +* c", err: "unexpected token"},
	}
	for _, tc := range tests {
		l, r, eq, err := ParseEquation(tc.in)
		if tc.err != "" {
			if err == nil || !strings.Contains(err.Error(), tc.err) {
				t.Errorf("ParseEquation(%q) error %v, want %q", tc.in, err, tc.err)
			}
			continue
		}
		if err != nil {
			t.Errorf("ParseEquation(%q): %v", tc.in, err)
			continue
		}
		if show(l) != tc.lhs || show(r) != tc.rhs || eq != tc.eq {
			t.Errorf("ParseEquation(%q) = %s | %s | %d, want %s | %s | %d", tc.in, show(l), show(r), eq, tc.lhs, tc.rhs, tc.eq)
		}
	}
}

func TestParseFor(t *testing.T) {
	tests := []struct {
		in, want, err string
	}{
		{in: "i in 2..NT-1", want: "i@0 in 2@5..(NT@8 -@10 1@11)"},
		{in: "i in stage", want: "i@0 in stage"},
		{in: "i in stage, j in comp", want: "i@0 in stage; j@12 in comp"},
		{in: "i in 1..(N-1), j in x..y", want: "i@0 in 1@5..(N@9 -@10 1@11); j@15 in x@20..y@23"},
		{in: "i of stage", err: "unexpected token"},
		{in: "i in stage, i in comp", err: `index "i" appears twice`},
		{in: "i in stage,", err: "empty loop"},
		{in: "2 in stage", err: "plain name"},
		{in: "i in 3", err: "a range is a set name"},
		{in: "i", err: `a loop reads "i in SET"`},
	}
	for _, tc := range tests {
		ls, err := ParseFor(tc.in)
		if tc.err != "" {
			if err == nil || !strings.Contains(err.Error(), tc.err) {
				t.Errorf("ParseFor(%q) error %v, want %q", tc.in, err, tc.err)
			}
			continue
		}
		if err != nil {
			t.Errorf("ParseFor(%q): %v", tc.in, err)
			continue
		}
		var parts []string
		for _, l := range ls {
			parts = append(parts, fmt.Sprintf("%s@%d in %s", l.Var, l.Off, showRange(l.Range)))
		}
		if got := strings.Join(parts, "; "); got != tc.want {
			t.Errorf("ParseFor(%q) = %s, want %s", tc.in, got, tc.want)
		}
	}
}

func TestParseRange(t *testing.T) {
	r, err := ParseRange("2..NT-1")
	if err != nil || showRange(r) != "2@0..(NT@3 -@5 1@6)" {
		t.Errorf("ParseRange = %s, %v", showRange(r), err)
	}
	if _, err := ParseRange("1, 2"); err == nil {
		t.Error("ParseRange accepted 1, 2")
	}
}

func ExampleParseEquation() {
	lhs, rhs, eq, err := ParseEquation("f_out * s_out = f_conc * s_conc + f_water * s_water")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%T at %d, %T at %d, \"=\" at %d\n", lhs, lhs.Offset(), rhs, rhs.Offset(), eq)
	// Output:
	// *formula.Binary at 6, *formula.Binary at 32, "=" at 14
}
