package report_test

import (
	"bytes"
	"fmt"
	"regexp"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/loopwright/loopwright/cmd/internal/report"
	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/model"
)

// The Wood & Berry column gains (checkvalues.md §1) rendered as a report
// with only the analysis: the RGA rows show λ11 = 2.01 with its band
// marker, and the paired cells are bold.
func ExampleWrite() {
	g := &interact.GainSet{
		Outputs: []interact.Signal{{Name: "xD", Unit: "wt%"}, {Name: "xB", Unit: "wt%"}},
		Inputs:  []interact.Signal{{Name: "R", Unit: "lb/min"}, {Name: "S", Unit: "lb/min"}},
		K:       mat.NewDense(2, 2, []float64{12.8, -18.9, 6.6, -19.4}),
	}
	a, err := interact.Analyze(g, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	var b bytes.Buffer
	in := &report.Input{System: &model.System{Name: "wood-berry", File: "wood-berry.yaml"}, Gains: g, Analysis: a}
	if err := report.Write(&b, in); err != nil {
		fmt.Println(err)
		return
	}
	rga := regexp.MustCompile(`(?s)<div class="tbl" id="rga">.*?</table>`).Find(b.Bytes())
	tags := regexp.MustCompile(`<[^>]+>`)
	for _, row := range regexp.MustCompile(`<tr><th scope="row">.*?</tr>`).FindAll(rga, -1) {
		fmt.Println(strings.Join(strings.Fields(string(tags.ReplaceAll(row, []byte(" ")))), " "))
	}
	// Output:
	// xD ▸ 2.01 ◕ -1.01 ✕
	// xB -1.01 ✕ ▸ 2.01 ◕
}
