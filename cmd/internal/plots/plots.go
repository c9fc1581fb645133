// Package plots draws a sweep's records as SVG: the paired relative gains
// along one axis, and a heat map over two axes of the recommended pairing's
// relative gain with the boundary where the best pairing switches. Output
// is deterministic: the same records give the same bytes.
package plots

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"github.com/loopwright/loopwright/interact/sweep"
)

// Size of every plot.
const (
	Width  = 6 * vg.Inch
	Height = 4 * vg.Inch
)

// Data is a sweep's records under its header, indexed by point.
type Data struct {
	Header *sweep.Header
	Plan   *sweep.Plan
	byIdx  map[int]*sweep.Record
}

// NewData indexes records (any order) for plotting.
func NewData(h *sweep.Header, recs []sweep.Record) (*Data, error) {
	plan, err := sweep.NewPlan(h.Axes, h.Design)
	if err != nil {
		return nil, err
	}
	d := &Data{Header: h, Plan: plan, byIdx: map[int]*sweep.Record{}}
	for i := range recs {
		d.byIdx[recs[i].Index] = &recs[i]
	}
	return d, nil
}

// lambda is the paired λ of pairing k's first paired output at record r,
// NaN when r is missing or was not analysed.
func (d *Data) lambda(r *sweep.Record, k int) float64 {
	if r == nil || !r.Converged {
		return math.NaN()
	}
	pr := d.Header.Pairings[k]
	for i, j := range pr.Input {
		if j >= 0 {
			return r.Lambda(d.Header, pr, i)
		}
	}
	return math.NaN()
}

// lambdaName is "λ(top:L)" for pairing k.
func (d *Data) lambdaName(k int) string {
	pr := d.Header.Pairings[k]
	for i, j := range pr.Input {
		if j >= 0 {
			return "λ(" + d.Header.Outputs[i].Name + ":" + d.Header.Inputs[j].Name + ")"
		}
	}
	return "λ"
}

// nominalIndex is, for each grid axis, the index of the grid value nearest
// to the nominal value: the slice through the nominal point.
func (d *Data) nominalIndex() []int {
	idx := make([]int, len(d.Header.Axes))
	for a, ax := range d.Header.Axes {
		best := math.Inf(1)
		for k, v := range ax.Values() {
			if e := math.Abs(v - ax.Nominal); e < best {
				best, idx[a] = e, k
			}
		}
	}
	return idx
}

func axisSetup(pa *plot.Axis, ax sweep.Axis) {
	pa.Label.Text = ax.Label()
	if ax.Log && ax.Display(ax.From) > 0 && ax.Display(ax.To) > 0 {
		pa.Scale = plot.LogScale{}
		pa.Tick.Marker = plot.LogTicks{Prec: -1}
	}
}

// Lambda writes the SVG of the paired λ of every pairing of interest along
// axis a. On a grid the other axes are held at their values nearest the
// nominal point and the points are joined, with gaps at points that did not
// converge; on a scattered design every point is shown, unjoined.
func (d *Data) Lambda(w io.Writer, a int) error {
	h := d.Header
	ax := h.Axes[a]
	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s: paired relative gains along %s", h.Model, ax.Name)
	axisSetup(&p.X, ax)
	p.Y.Label.Text = "paired relative gain λ [-]"
	p.Add(plotter.NewGrid())
	p.Legend.Top = true

	for k, pr := range h.Pairings {
		name := fmt.Sprintf("%s %s (%s)", pr.Label, d.lambdaName(k), pr.Role)
		col := plotutil.Color(k)
		if d.Plan.IsGrid() {
			segs := d.lineSegments(a, k)
			for s, xy := range segs {
				lp, pts, err := plotter.NewLinePoints(xy)
				if err != nil {
					return err
				}
				lp.Color, pts.Color, pts.Shape = col, col, plotutil.Shape(k)
				lp.Dashes = plotutil.Dashes(k)
				p.Add(lp, pts)
				if s == 0 {
					p.Legend.Add(name, lp, pts)
				}
			}
			if len(segs) == 0 {
				p.Legend.Add(name+": no converged point", &swatch{color.Gray{Y: 160}})
			}
			continue
		}
		var xy plotter.XYs
		for i := 0; i < d.Plan.Len(); i++ {
			r := d.byIdx[i]
			if v := d.lambda(r, k); !math.IsNaN(v) && !math.IsInf(v, 0) {
				xy = append(xy, plotter.XY{X: r.Values[a], Y: v})
			}
		}
		sc, err := plotter.NewScatter(xy)
		if err != nil {
			return err
		}
		sc.Color, sc.Shape = col, plotutil.Shape(k)
		p.Add(sc)
		p.Legend.Add(name, sc)
	}
	wt, err := p.WriterTo(Width, Height, "svg")
	if err != nil {
		return err
	}
	_, err = wt.WriteTo(w)
	return err
}

// lineSegments returns λ of pairing k along grid axis a through the
// nominal slice, split at points without a finite value.
func (d *Data) lineSegments(a, k int) []plotter.XYs {
	idx := d.nominalIndex()
	dims := d.Plan.Dims()
	var segs []plotter.XYs
	var cur plotter.XYs
	for v := 0; v < dims[a]; v++ {
		idx[a] = v
		i := flat(dims, idx)
		r := d.byIdx[i]
		l := d.lambda(r, k)
		if math.IsNaN(l) || math.IsInf(l, 0) {
			if len(cur) > 0 {
				segs = append(segs, cur)
			}
			cur = nil
			continue
		}
		cur = append(cur, plotter.XY{X: r.Values[a], Y: l})
	}
	if len(cur) > 0 {
		segs = append(segs, cur)
	}
	return segs
}

func flat(dims, idx []int) int {
	i := 0
	for a, n := range dims {
		i = i*n + idx[a]
	}
	return i
}

// grid is the heat map's data: λ of pairing 0 over axes ax (columns) and
// ay (rows), other axes at the nominal slice.
type grid struct {
	d      *Data
	ax, ay int
	xs, ys []float64 // display values
	z      [][]float64
	best   [][]string
	ok     [][]bool
}

func (g *grid) Dims() (c, r int)   { return len(g.xs), len(g.ys) }
func (g *grid) Z(c, r int) float64 { return g.z[r][c] }
func (g *grid) X(c int) float64    { return g.xs[c] }
func (g *grid) Y(r int) float64    { return g.ys[r] }

func (d *Data) grid(ax, ay int) *grid {
	h := d.Header
	g := &grid{d: d, ax: ax, ay: ay}
	for _, v := range h.Axes[ax].Values() {
		g.xs = append(g.xs, h.Axes[ax].Display(v))
	}
	for _, v := range h.Axes[ay].Values() {
		g.ys = append(g.ys, h.Axes[ay].Display(v))
	}
	idx := d.nominalIndex()
	dims := d.Plan.Dims()
	for r := range g.ys {
		zrow, brow, orow := make([]float64, len(g.xs)), make([]string, len(g.xs)), make([]bool, len(g.xs))
		for c := range g.xs {
			idx[ax], idx[ay] = c, r
			rec := d.byIdx[flat(dims, idx)]
			zrow[c] = d.lambda(rec, 0)
			if rec != nil && rec.Converged && rec.RGA != nil {
				brow[c], orow[c] = rec.Best, true
			}
		}
		g.z, g.best, g.ok = append(g.z, zrow), append(g.best, brow), append(g.ok, orow)
	}
	return g
}

// edges returns the cell edges around grid values (midpoints, and half a
// step beyond the ends).
func edges(v []float64) []float64 {
	e := make([]float64, len(v)+1)
	if len(v) == 1 {
		return []float64{v[0] - 0.5, v[0] + 0.5}
	}
	for i := 1; i < len(v); i++ {
		e[i] = (v[i-1] + v[i]) / 2
	}
	e[0] = v[0] - (v[1]-v[0])/2
	e[len(v)] = v[len(v)-1] + (v[len(v)-1]-v[len(v)-2])/2
	return e
}

// boundary draws the switch boundary: a segment on the shared edge of every
// two neighbouring cells whose best pairings differ.
type boundary struct {
	segs [][4]float64 // x0, y0, x1, y1 in data units
}

func (b *boundary) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	sty := draw.LineStyle{Color: color.Black, Width: vg.Points(2.5)}
	for _, s := range b.segs {
		c.StrokeLine2(sty, tx(s[0]), ty(s[1]), tx(s[2]), ty(s[3]))
	}
}

func (g *grid) boundary() *boundary {
	xe, ye := edges(g.xs), edges(g.ys)
	b := &boundary{}
	for r := range g.ys {
		for c := range g.xs {
			if !g.ok[r][c] {
				continue
			}
			if c+1 < len(g.xs) && g.ok[r][c+1] && g.best[r][c] != g.best[r][c+1] {
				b.segs = append(b.segs, [4]float64{xe[c+1], ye[r], xe[c+1], ye[r+1]})
			}
			if r+1 < len(g.ys) && g.ok[r+1][c] && g.best[r][c] != g.best[r+1][c] {
				b.segs = append(b.segs, [4]float64{xe[c], ye[r+1], xe[c+1], ye[r+1]})
			}
		}
	}
	return b
}

// HeatMap writes the SVG of λ of the recommended pairing (the first pairing
// of interest) over grid axes ax and ay, with the switch boundary of the
// best pairing drawn as a thick black line and a colour bar beside it.
func (d *Data) HeatMap(w io.Writer, ax, ay int) error {
	if !d.Plan.IsGrid() {
		return fmt.Errorf("a heat map needs a grid design")
	}
	h := d.Header
	g := d.grid(ax, ay)
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, row := range g.z {
		for _, v := range row {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	if lo > hi { // nothing converged
		lo, hi = 0, 1
	}
	if lo == hi {
		lo, hi = lo-0.5, hi+0.5
	}
	cm := moreland.SmoothBlueRed()
	cm.SetMin(lo)
	cm.SetMax(hi)
	hm := plotter.NewHeatMap(g, cm.Palette(255))
	hm.Min, hm.Max = lo, hi
	hm.NaN = color.Gray{Y: 160}

	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s: %s of %s", h.Model, d.lambdaName(0), h.Pairings[0].Name)
	p.X.Label.Text, p.Y.Label.Text = h.Axes[ax].Label(), h.Axes[ay].Label()
	p.Add(hm, g.boundary())
	p.Legend.Add("best pairing switches", &plotter.Line{LineStyle: draw.LineStyle{Color: color.Black, Width: vg.Points(2.5)}})
	p.Legend.Add("not converged", &swatch{color.Gray{Y: 160}})
	p.Legend.Top = true

	bar := plot.New()
	bar.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true})
	bar.HideX()
	bar.Y.Label.Text = d.lambdaName(0)
	bar.Y.Padding = 0

	c := vgsvg.New(Width+vg.Inch, Height)
	dc := draw.New(c)
	p.Draw(draw.Crop(dc, 0, -vg.Inch, 0, 0))
	bar.Draw(draw.Crop(dc, Width+0.1*vg.Inch, 0, 0.45*vg.Inch, -0.35*vg.Inch))
	_, err := c.WriteTo(w)
	return err
}

// swatch is a legend thumbnail filled with one colour.
type swatch struct{ c color.Color }

func (s *swatch) Thumbnail(c *draw.Canvas) {
	pts := []vg.Point{{X: c.Min.X, Y: c.Min.Y}, {X: c.Min.X, Y: c.Max.Y}, {X: c.Max.X, Y: c.Max.Y}, {X: c.Max.X, Y: c.Min.Y}}
	c.FillPolygon(s.c, c.ClipPolygonXY(pts))
}

// File is one plot to write: its file name and how to draw it.
type File struct {
	Name string
	Draw func(io.Writer) error
}

// Files lists the plots for the sweep: λ along every axis that has more
// than one point, and for grids with two or more such axes the heat map
// over the first two.
func (d *Data) Files() []File {
	var out []File
	var moving []int
	for a, ax := range d.Header.Axes {
		if ax.Points > 1 || !d.Plan.IsGrid() {
			moving = append(moving, a)
		}
	}
	for _, a := range moving {
		out = append(out, File{Name: "lambda-" + safe(d.Header.Axes[a].Name) + ".svg", Draw: func(w io.Writer) error { return d.Lambda(w, a) }})
	}
	if d.Plan.IsGrid() && len(moving) >= 2 {
		ax, ay := moving[1], moving[0] // first axis up the page, second across
		out = append(out, File{Name: "heatmap-" + safe(d.Header.Axes[ax].Name) + "-" + safe(d.Header.Axes[ay].Name) + ".svg",
			Draw: func(w io.Writer) error { return d.HeatMap(w, ax, ay) }})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}

// safe turns a symbol name (possibly indexed, "x[3]") into a file-name part.
func safe(s string) string {
	b := []byte(s)
	for i, c := range b {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_') {
			b[i] = '_'
		}
	}
	return string(b)
}
