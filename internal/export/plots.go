package export

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"path/filepath"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"parch/internal/kinetics"
)

// Plot size: 8 × 5 inches; PNG at 96 dots per inch is 768 × 480 pixels.
const (
	plotW = 8 * vg.Inch
	plotH = 5 * vg.Inch
	// PNGWidth and PNGHeight are the pixel size of the PNG plots.
	PNGWidth  = 768
	PNGHeight = 480
)

// Plot files, each written as .svg and .png.
const (
	PlotMoisture = "moisture"
	PlotRate     = "rate_vs_moisture"
	PlotLnMR     = "ln_mr_diffusivity"
	PlotModel    = "best_model"
)

var (
	black = color.RGBA{A: 255}
	grey  = color.RGBA{R: 150, G: 150, B: 150, A: 255}
	blue  = color.RGBA{R: 31, G: 90, B: 180, A: 255}
	red   = color.RGBA{R: 200, G: 40, B: 40, A: 255}
	green = color.RGBA{R: 30, G: 140, B: 60, A: 255}
)

// maxPlotPoints keeps plot files small: long runs are binned.
const maxPlotPoints = 1500

// Plots draws the four plots that can be drawn from what is known; a plot
// that needs unknown values (dry solids, thickness) is left out.
func Plots(dir string, b *Bundle) error {
	type job struct {
		name string
		make func(*Bundle) (*plot.Plot, error)
	}
	jobs := []job{{PlotMoisture, moisturePlot}, {PlotRate, ratePlot}, {PlotLnMR, lnMRPlot}}
	for _, j := range jobs {
		p, err := j.make(b)
		if err != nil {
			return fmt.Errorf("plot %s: %w", j.name, err)
		}
		if p == nil {
			continue
		}
		if err := savePlot(dir, j.name, p); err != nil {
			return err
		}
	}
	return modelPlot(dir, b)
}

// series gathers kept readings as (x, y), averaged in runs of consecutive
// points to at most maxPlotPoints. The points are counted first and the
// runs averaged as they come: a long run's points are never gathered whole.
func series(b *Bundle, x, y func(i int) float64) plotter.XYs {
	p := &b.Res.Points
	each := func(fn func(xv, yv float64)) {
		for i := range p.Reject {
			if p.Reject[i] != kinetics.KeepOK {
				continue
			}
			xv, yv := x(i), y(i)
			if math.IsNaN(xv) || math.IsNaN(yv) || math.IsInf(xv, 0) || math.IsInf(yv, 0) {
				continue
			}
			fn(xv, yv)
		}
	}
	n := 0
	each(func(float64, float64) { n++ })
	per := max(1, (n+maxPlotPoints-1)/maxPlotPoints)
	out := make(plotter.XYs, 0, (n+per-1)/per)
	var sx, sy float64
	k := 0
	each(func(xv, yv float64) {
		sx, sy, k = sx+xv, sy+yv, k+1
		if k == per {
			out = append(out, plotter.XY{X: sx / float64(k), Y: sy / float64(k)})
			sx, sy, k = 0, 0, 0
		}
	})
	if k > 0 {
		out = append(out, plotter.XY{X: sx / float64(k), Y: sy / float64(k)})
	}
	return out
}

func line(pts plotter.XYs, c color.Color, dashed bool) (*plotter.Line, error) {
	l, err := plotter.NewLine(pts)
	if err != nil {
		return nil, err
	}
	l.Color = c
	l.Width = vg.Points(1.2)
	if dashed {
		l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
	}
	return l, nil
}

// dots is a scatter of small round points.
func dots(pts plotter.XYs, c color.Color, radius float64) (*plotter.Scatter, error) {
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	sc.GlyphStyle.Radius = vg.Points(radius)
	sc.GlyphStyle.Color = c
	return sc, nil
}

func hline(x0, x1, y float64) plotter.XYs { return plotter.XYs{{X: x0, Y: y}, {X: x1, Y: y}} }

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.Add(plotter.NewGrid())
	p.Legend.Top = true
	return p
}

// moisturePlot: mass against time with the target and dry-solids lines and
// the notes marked.
func moisturePlot(b *Bundle) (*plot.Plot, error) {
	r := b.Res
	t := b.Run.Series.TimeH
	var p *plot.Plot
	var data plotter.XYs
	if r.MassKnown {
		p = newPlot("Mass against time", "elapsed time (h)", "mass on the balance (g)")
		data = series(b, func(i int) float64 { return t[i] }, func(i int) float64 { return r.Points.NetG[i] })
	} else {
		p = newPlot("Moisture against time", "elapsed time (h)", "moisture (dry basis)")
		data = series(b, func(i int) float64 { return t[i] }, func(i int) float64 { return r.Points.X(i) })
	}
	if len(data) < 2 {
		return nil, nil
	}
	x0, x1 := data[0].X, data[len(data)-1].X
	l, err := line(data, blue, false)
	if err != nil {
		return nil, err
	}
	p.Add(l)
	p.Legend.Add("readings (kept)", l)
	target, solids := r.TargetMassG, r.DryMassG
	if !r.MassKnown {
		target, solids = math.NaN(), math.NaN()
		if !math.IsNaN(r.TargetMoistureWBPct) {
			target = kinetics.WetToDry(r.TargetMoistureWBPct / 100)
		}
	}
	if !math.IsNaN(target) {
		tl, _ := line(hline(x0, x1, target), red, true)
		p.Add(tl)
		p.Legend.Add(fmt.Sprintf("target %.1f %% wb", r.TargetMoistureWBPct), tl)
	}
	if !math.IsNaN(solids) {
		sl, _ := line(hline(x0, x1, solids), grey, true)
		p.Add(sl)
		p.Legend.Add("dry solids", sl)
	}
	// Notes: a marker at the curve where each was made.
	var marks plotter.XYs
	for _, n := range b.Run.Notes {
		if math.IsNaN(n.ElapsedH) {
			continue
		}
		if y := interp(data, n.ElapsedH); !math.IsNaN(y) {
			marks = append(marks, plotter.XY{X: n.ElapsedH, Y: y})
		}
	}
	if len(marks) > 0 {
		sc, err := plotter.NewScatter(marks)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle.Shape = draw.TriangleGlyph{}
		sc.GlyphStyle.Radius = vg.Points(4)
		sc.GlyphStyle.Color = green
		p.Add(sc)
		p.Legend.Add("notes", sc)
	}
	return p, nil
}

func interp(pts plotter.XYs, x float64) float64 {
	for i := 1; i < len(pts); i++ {
		if pts[i].X >= x && pts[i-1].X <= x {
			if pts[i].X == pts[i-1].X {
				return pts[i].Y
			}
			f := (x - pts[i-1].X) / (pts[i].X - pts[i-1].X)
			return pts[i-1].Y + f*(pts[i].Y-pts[i-1].Y)
		}
	}
	return math.NaN()
}

// ratePlot: the drying-rate curve, rate against dry-basis moisture.
func ratePlot(b *Bundle) (*plot.Plot, error) {
	r := b.Res
	if !r.MassKnown {
		return nil, nil
	}
	data := series(b, func(i int) float64 { return r.Points.X(i) }, func(i int) float64 { return r.Points.RateG(i) })
	if len(data) < 2 {
		return nil, nil
	}
	p := newPlot("Drying rate against moisture", "moisture (dry basis, kg water/kg solids)", "drying rate (g/h)")
	p.Legend.Top = false // the data fill the top right; the bottom right is empty
	sc, err := dots(data, blue, 1.2)
	if err != nil {
		return nil, err
	}
	p.Add(sc)
	p.Legend.Add("smoothed rate", sc)
	if cr := r.ConstantRate; cr != nil && !cr.Ongoing && !math.IsNaN(cr.CriticalDB) {
		cl, _ := line(plotter.XYs{{X: cr.CriticalDB, Y: 0}, {X: cr.CriticalDB, Y: cr.RateGPerH}}, red, true)
		p.Add(cl)
		p.Legend.Add(fmt.Sprintf("critical moisture %.2f", cr.CriticalDB), cl)
	}
	return p, nil
}

// lnMRPlot: ln(MR) against time with the diffusivity fit.
func lnMRPlot(b *Bundle) (*plot.Plot, error) {
	r := b.Res
	t := b.Run.Series.TimeH
	data := series(b, func(i int) float64 { return t[i] }, func(i int) float64 {
		if mr := r.Points.MR(i); mr > 0 {
			return math.Log(mr)
		}
		return math.NaN()
	})
	if len(data) < 2 {
		return nil, nil
	}
	p := newPlot("ln(moisture ratio) against time", "elapsed time (h)", "ln MR")
	sc, err := dots(data, blue, 1.2)
	if err != nil {
		return nil, err
	}
	p.Add(sc)
	p.Legend.Add("ln MR", sc)
	if d := r.Diffusivity; d != nil {
		lm := b.Setup.HalfThicknessM()
		var fit plotter.XYs
		for k := 0; k <= 200; k++ {
			h := d.FromH + (d.ToH-d.FromH)*float64(k)/200
			fit = append(fit, plotter.XY{X: h, Y: math.Log(kinetics.PlaneSheetMR(d.DM2PerS * 3600 * (h - d.LagH) / (lm * lm)))})
		}
		l, _ := line(fit, red, false)
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("Crank plane sheet, Deff %.3g m²/s", d.DM2PerS), l)
	}
	return p, nil
}

// modelPlot: the best model over the moisture ratio, with residuals below.
func modelPlot(dir string, b *Bundle) error {
	r := b.Res
	best := r.Best
	if best == nil {
		return nil
	}
	t := b.Run.Series.TimeH
	data := series(b, func(i int) float64 { return t[i] }, func(i int) float64 { return r.Points.MR(i) })
	if len(data) < 2 {
		return nil
	}
	top := newPlot(fmt.Sprintf("Best model: %s (R² %.4f)", best.Model.Title, best.R2), "", "moisture ratio")
	sc, err := dots(data, blue, 1.2)
	if err != nil {
		return err
	}
	top.Add(sc)
	top.Legend.Add("data", sc)
	var curve, res plotter.XYs
	x0, x1 := data[0].X, data[len(data)-1].X
	for k := 0; k <= 300; k++ {
		h := x0 + (x1-x0)*float64(k)/300
		curve = append(curve, plotter.XY{X: h, Y: best.Model.Eval(h, best.P)})
	}
	for _, q := range data {
		res = append(res, plotter.XY{X: q.X, Y: q.Y - best.Model.Eval(q.X, best.P)})
	}
	l, _ := line(curve, red, false)
	top.Add(l)
	top.Legend.Add(best.Model.Title, l)
	bottom := newPlot("", "elapsed time (h)", "residual")
	rs, err := dots(res, black, 1)
	if err != nil {
		return err
	}
	bottom.Add(rs)
	zl, _ := line(hline(x0, x1, 0), grey, true)
	bottom.Add(zl)
	bottom.X.Min, bottom.X.Max = top.X.Min, top.X.Max

	for _, ext := range []string{".svg", ".png"} {
		c, err := draw.NewFormattedCanvas(plotW, plotH, ext[1:])
		if err != nil {
			return err
		}
		dc := draw.New(c)
		tiles := draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(4), PadTop: vg.Points(2), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(2)}
		canvases := plot.Align([][]*plot.Plot{{top}, {bottom}}, tiles, dc)
		top.Draw(canvases[0][0])
		bottom.Draw(canvases[1][0])
		if err := writeFile(filepath.Join(dir, PlotModel+ext), func(w io.Writer) error { _, err := c.WriteTo(w); return err }); err != nil {
			return err
		}
	}
	return nil
}

// savePlot writes a plot as name.svg and name.png.
func savePlot(dir, name string, p *plot.Plot) error {
	for _, ext := range []string{".svg", ".png"} {
		wt, err := p.WriterTo(plotW, plotH, ext[1:])
		if err == nil {
			err = writeFile(filepath.Join(dir, name+ext), func(w io.Writer) error { _, err := wt.WriteTo(w); return err })
		}
		if err != nil {
			return fmt.Errorf("plot %s: %w", name, err)
		}
	}
	return nil
}
