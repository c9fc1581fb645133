package sweep_test

import (
	"fmt"

	"github.com/loopwright/loopwright/interact/sweep"
)

// A 3 x 4 grid: one continuation chain per value of the first axis, each
// walking the second axis; a logarithmic axis spaces points evenly in log.
func ExampleNewPlan() {
	axes := []sweep.Axis{
		{Name: "zF", Param: 0, From: 0.45, To: 0.55, Points: 3, Nominal: 0.5},
		{Name: "k", Param: 1, From: 1, To: 1000, Points: 4, Log: true, Nominal: 10},
	}
	plan, err := sweep.NewPlan(axes, sweep.Design{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("points:", plan.Len(), "chains:", len(plan.Chains))
	fmt.Printf("k values: %.4g\n", axes[1].Values())
	for k, st := range plan.Chains[1] {
		if k > 0 {
			fmt.Print(" ")
		}
		fmt.Print(st.Point, "<-", st.Parent)
	}
	fmt.Println()
	fmt.Println("shard 1/2 points:", plan.PointsOf(sweep.Shard{K: 1, N: 2}))
	// Output:
	// points: 12 chains: 3
	// k values: [1 10 100 1000]
	// 4<--1 5<-4 6<-5 7<-6
	// shard 1/2 points: [4 5 6 7]
}
