package interact_test

import (
	"fmt"

	"github.com/loopwright/loopwright/interact"
	"gonum.org/v1/gonum/mat"
)

// The steady-state gains of the Wood & Berry (1973) methanol-water column
// (checkvalues §1): outputs xD, xB; inputs reflux R and steam S.
func ExampleRGA() {
	k := mat.NewDense(2, 2, []float64{
		12.8, -18.9,
		6.6, -19.4,
	})
	var rga mat.Dense
	if err := interact.RGA(&rga, k); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("Λ = %.4f\n", mat.Formatted(&rga, mat.Prefix("    "), mat.Squeeze()))
	// Output:
	// Λ = ⎡ 2.0094  -1.0094⎤
	//     ⎣-1.0094   2.0094⎦
}

func ExampleNiederlinski() {
	k := mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4}) // Wood & Berry (1973)
	fmt.Printf("NI(xD-R, xB-S) = %.5f\n", interact.Niederlinski(k, interact.Pairing{0, 1}))
	// Output:
	// NI(xD-R, xB-S) = 0.49766
}

func ExampleMinConditionNumber() {
	k := mat.NewDense(2, 2, []float64{87.8, -86.4, 108.2, -109.6}) // column A, LV (SP eq. 3.45)
	gamma, _, _, err := interact.MinConditionNumber(k)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("γ* = %.3f\n", gamma)
	// Output:
	// γ* = 138.268
}

func ExampleAnalyze() {
	g := &interact.GainSet{
		Outputs: []interact.Signal{{Name: "xD"}, {Name: "xB"}},
		Inputs:  []interact.Signal{{Name: "R"}, {Name: "S"}},
		K:       mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4}), // Wood & Berry (1973)
	}
	a, err := interact.Analyze(g, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range a.Pairings {
		fmt.Printf("%s: %v, score %.3f\n", p.Label, p.Verdict, p.Score)
		for _, r := range p.Reasons {
			fmt.Println("  ", r)
		}
	}
	// Output:
	// xD-R, xB-S: acceptable, score 4.038
	//    xD paired with R has λ = 2.009: acceptable, but the loop's gain falls to 1/2.009 of its open-loop value when the other loops close; tune it with them closed.
	//    xB paired with S has λ = 2.009: acceptable, but the loop's gain falls to 1/2.009 of its open-loop value when the other loops close; tune it with them closed.
	// xD-S, xB-R: rejected, score 8.038
	//    xD paired with S has λ = -1.009 < 0: the loop's gain changes sign when the other loops close, so a controller tuned with them open drives it the wrong way.
	//    xB paired with R has λ = -1.009 < 0: the loop's gain changes sign when the other loops close, so a controller tuned with them open drives it the wrong way.
}

// The two runners-up tie at cost 6; ties come out in Murty's search order,
// which is deterministic but not lexicographic.
func ExampleBestPairings() {
	cost := mat.NewDense(3, 3, []float64{
		4, 1, 3,
		2, 0, 5,
		3, 2, 2,
	})
	for _, p := range interact.BestPairings(cost, 3) {
		fmt.Println(p)
	}
	// Output:
	// y1-u2 y2-u1 y3-u3
	// y1-u3 y2-u2 y3-u1
	// y1-u1 y2-u2 y3-u3
}

// An Analyzer analyses one operating point after another without
// allocating. Here an invented scenario: the Wood & Berry (1973) gains with
// the steam-to-bottoms gain k22 weakening from -19.4 to -9.7, as it might
// over an operating envelope; near -9.7 K is close to singular
// (λ11 = 1/(1 - k12·k21/(k11·k22)), worked by hand: 2.009, 3.028, -214.07).
func ExampleAnalyzer() {
	k := mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4})
	g := &interact.GainSet{
		Outputs: []interact.Signal{{Name: "xD"}, {Name: "xB"}},
		Inputs:  []interact.Signal{{Name: "R"}, {Name: "S"}},
		K:       k,
	}
	z := interact.NewAnalyzer(&interact.Options{Brief: true, MaxPairings: -1})
	for _, k22 := range []float64{-19.4, -14.55, -9.7} {
		k.Set(1, 1, k22)
		a, err := z.Analyze(g) // a is overwritten by the next call
		if err != nil {
			fmt.Println(err)
			return
		}
		best := a.Pairings[0]
		fmt.Printf("k22 = %6.2f: λ11 = %6.3f, best %v (%v), γ* = %.2f\n", k22, a.RGA.At(0, 0), best.Pairs, best.Verdict, a.MinCond)
	}
	// Output:
	// k22 = -19.40: λ11 =  2.009, best y1-u1 y2-u2 (acceptable), γ* = 5.87
	// k22 = -14.55: λ11 =  3.028, best y1-u1 y2-u2 (acceptable), γ* = 10.01
	// k22 =  -9.70: λ11 = -214.069, best y1-u2 y2-u1 (caution), γ* = 858.27
}
