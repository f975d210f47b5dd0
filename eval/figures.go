package eval

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/brewer"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Figures are PNG images drawn with gonum.org/v1/plot at figDPI. Every
// figure function returns the encoded PNG bytes.

// figDPI makes a 7-inch-wide figure 840 px wide: sharp on screens, small
// enough to embed several in one HTML file.
const figDPI = 120

// seriesColors is the Okabe & Ito (2008) colour-blind-safe palette, in the
// order blue, vermillion, bluish green, orange, reddish purple, sky blue,
// black.
var seriesColors = []color.Color{
	color.RGBA{0x00, 0x72, 0xB2, 0xff},
	color.RGBA{0xD5, 0x5E, 0x00, 0xff},
	color.RGBA{0x00, 0x9E, 0x73, 0xff},
	color.RGBA{0xE6, 0x9F, 0x00, 0xff},
	color.RGBA{0xCC, 0x79, 0xA7, 0xff},
	color.RGBA{0x56, 0xB4, 0xE9, 0xff},
	color.RGBA{0x00, 0x00, 0x00, 0xff},
}

func seriesColor(i int) color.Color { return seriesColors[i%len(seriesColors)] }

var seriesGlyphs = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{},
	draw.PyramidGlyph{}, draw.RingGlyph{}, draw.BoxGlyph{}, draw.CrossGlyph{}}

func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = vg.Points(12)
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	p.X.Label.TextStyle.Font.Size = vg.Points(10)
	p.Y.Label.TextStyle.Font.Size = vg.Points(10)
	p.X.Tick.Label.Font.Size = vg.Points(9)
	p.Y.Tick.Label.Font.Size = vg.Points(9)
	p.Legend.TextStyle.Font.Size = vg.Points(9)
	return p
}

// renderPNG lays plots out in a grid of rows×cols tiles (nil entries stay
// blank) on a w×h canvas and encodes it as PNG.
func renderPNG(plots [][]*plot.Plot, w, h vg.Length) ([]byte, error) {
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(figDPI), vgimg.UseBackgroundColor(color.White))
	dc := draw.New(img)
	rows, cols := len(plots), 0
	for _, r := range plots {
		cols = max(cols, len(r))
	}
	blank := plot.New()
	blank.HideAxes()
	grid := make([][]*plot.Plot, rows)
	for j := range plots {
		grid[j] = make([]*plot.Plot, cols)
		for i := range cols {
			if i < len(plots[j]) && plots[j][i] != nil {
				grid[j][i] = plots[j][i]
			} else {
				grid[j][i] = blank
			}
		}
	}
	tiles := draw.Tiles{Rows: rows, Cols: cols, PadX: vg.Millimeter * 4, PadY: vg.Millimeter * 4,
		PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2, PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 3}
	canvases := plot.Align(grid, tiles, dc)
	for j := range grid {
		for i := range grid[j] {
			if grid[j][i] != blank {
				grid[j][i].Draw(canvases[j][i])
			}
		}
	}
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("eval: encoding figure: %w", err)
	}
	return buf.Bytes(), nil
}

// pointsWithCI is an XYer with asymmetric Y errors (for YErrorBars).
type pointsWithCI struct {
	plotter.XYs
	plotter.YErrors
}

func addSeries(p *plot.Plot, i int, name string, pts pointsWithCI) error {
	return addSeriesStyled(p, i, name, pts, false)
}

// addSeriesStyled adds series i; a dashed series (a peer's means, which have
// no interval) is drawn without error bars.
func addSeriesStyled(p *plot.Plot, i int, name string, pts pointsWithCI, dashed bool) error {
	line, scatter, err := plotter.NewLinePoints(pts.XYs)
	if err != nil {
		return err
	}
	c := seriesColor(i)
	line.Color = c
	line.Width = vg.Points(1.5)
	scatter.Color = c
	scatter.Shape = seriesGlyphs[i%len(seriesGlyphs)]
	scatter.Radius = vg.Points(2.5)
	if dashed {
		line.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		p.Add(line, scatter)
	} else {
		eb, err := plotter.NewYErrorBars(pts)
		if err != nil {
			return err
		}
		eb.Color = c
		eb.CapWidth = vg.Points(4)
		p.Add(eb, line, scatter)
	}
	if name != "" {
		p.Legend.Add(name, line, scatter)
	}
	return nil
}

// ConfusionFigure draws m.Confusion as a heat map: rows are true classes
// (top to bottom), columns predicted classes; a cell's colour is the
// fraction of its true class (row-normalised, so the diagonal reads as
// per-class recall) and its text the raw count.
func ConfusionFigure(m *Metrics, title string) ([]byte, error) {
	k := len(m.Classes)
	if k == 0 || len(m.Confusion) != k {
		return nil, fmt.Errorf("eval: confusion figure needs a %d×%d matrix", k, k)
	}
	g := confGrid{m.Confusion, make([]float64, k)}
	for r := range k {
		for _, v := range m.Confusion[r] {
			g.rowSum[r] += float64(v)
		}
	}
	p := newPlot(title, "predicted class", "true class")
	hm := plotter.NewHeatMap(g, blues)
	hm.Min, hm.Max = 0, 1
	hm.Rasterized = false
	p.Add(hm)
	// Counts, dark text on light cells and white on dark ones.
	var lab plotter.XYLabels
	var dark []bool
	for r := range k {
		for c := range k {
			lab.XYs = append(lab.XYs, plotter.XY{X: float64(c), Y: float64(k - 1 - r)})
			lab.Labels = append(lab.Labels, fmt.Sprint(m.Confusion[r][c]))
			dark = append(dark, g.Z(c, k-1-r) > 0.5)
		}
	}
	labels, err := plotter.NewLabels(lab)
	if err != nil {
		return nil, err
	}
	size := vg.Points(9)
	if k > 10 {
		size = vg.Points(7)
	}
	for i := range labels.TextStyle {
		labels.TextStyle[i].Font.Size = size
		labels.TextStyle[i].XAlign = draw.XCenter
		labels.TextStyle[i].YAlign = draw.YCenter
		if dark[i] {
			labels.TextStyle[i].Color = color.White
		}
	}
	p.Add(labels)
	var xt, yt []plot.Tick
	for c, name := range m.Classes {
		xt = append(xt, plot.Tick{Value: float64(c), Label: name})
		yt = append(yt, plot.Tick{Value: float64(k - 1 - c), Label: name})
	}
	p.X.Tick.Marker = plot.ConstantTicks(xt)
	p.Y.Tick.Marker = plot.ConstantTicks(yt)
	tiltTicks(&p.X)
	p.X.Min, p.X.Max = -0.5, float64(k)-0.5
	p.Y.Min, p.Y.Max = -0.5, float64(k)-0.5
	p.X.Padding, p.Y.Padding = 0, 0
	return renderPNG([][]*plot.Plot{{p}}, 6.2*vg.Inch, 5.6*vg.Inch)
}

type confGrid struct {
	m      [][]int
	rowSum []float64
}

func (g confGrid) Dims() (c, r int) { return len(g.m), len(g.m) }
func (g confGrid) X(c int) float64  { return float64(c) }
func (g confGrid) Y(r int) float64  { return float64(r) }
func (g confGrid) Z(c, r int) float64 {
	row := len(g.m) - 1 - r
	if g.rowSum[row] == 0 {
		return 0
	}
	return float64(g.m[row][c]) / g.rowSum[row]
}

// blues is ColorBrewer's nine-class sequential "Blues" (Brewer 2003), from
// gonum's palette/brewer; white text goes on its five darkest classes.
var blues = func() palette.Palette {
	p, err := brewer.GetPalette(brewer.TypeSequential, "Blues", 9)
	if err != nil {
		panic("eval: brewer Blues palette missing: " + err.Error())
	}
	return p
}()

// percentTicks labels [lo, hi] every step percentage points, with unlabelled
// minor ticks half-way; gonum's default ticker labels only 2-3 values on a
// short accuracy range.
type percentTicks struct{ step float64 }

func (t percentTicks) Ticks(lo, hi float64) []plot.Tick {
	var out []plot.Tick
	for v := math.Ceil(lo/t.step) * t.step; v <= hi+1e-9; v += t.step {
		out = append(out, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', -1, 64)})
		if m := v + t.step/2; m <= hi {
			out = append(out, plot.Tick{Value: m})
		}
	}
	return out
}

// pctAxis sets a percentage axis from lo (rounded down to 10) to 100.
func pctAxis(a *plot.Axis, lo float64) {
	a.Min = math.Max(0, math.Floor(lo/10)*10)
	a.Max = 100
	step := 10.0
	if a.Max-a.Min > 50 {
		step = 20
	}
	a.Tick.Marker = percentTicks{step}
}

// tiltTicks sets an axis' tick labels at 35° so long class names fit.
func tiltTicks(a *plot.Axis) {
	a.Tick.Label.Rotation = math.Pi * 35 / 180
	a.Tick.Label.XAlign = draw.XRight
	a.Tick.Label.YAlign = draw.YTop
}

// RobustnessFigure draws accuracy against perturbation level, one panel per
// kind (titled by the kind), one line per model, with Wilson-interval error
// bars.
func RobustnessFigure(curves []*Robustness) ([]byte, error) {
	return curvePanels(curves, 0)
}

// curvePanels draws RobustnessFigure's panels; the last dashed curves are
// peers' means, drawn dashed and without intervals.
func curvePanels(curves []*Robustness, dashed int) ([]byte, error) {
	if len(curves) == 0 {
		return nil, fmt.Errorf("eval: robustness figure with no curves")
	}
	kinds := curves[0].Kinds()
	// One accuracy range for every panel, so drops compare across kinds.
	lo := 100.0
	for _, c := range curves {
		for _, q := range c.Points {
			lo = min(lo, 100*q.CI.Lo)
		}
	}
	cols := min(3, len(kinds))
	rows := (len(kinds) + cols - 1) / cols
	grid := make([][]*plot.Plot, rows)
	for ki, kind := range kinds {
		unit := ""
		if s := curves[0].Series(kind); len(s) > 0 {
			unit = s[len(s)-1].Unit
		}
		ptitle := kind
		if t, ok := kindTitles[kind]; ok {
			ptitle = t
		}
		xl := ptitle
		if unit != "" {
			xl += " (" + unit + ")"
		}
		p := newPlot(ptitle, xl, "accuracy (%)")
		for mi, c := range curves {
			s := c.Series(kind)
			pts := pointsWithCI{}
			for _, q := range s {
				pts.XYs = append(pts.XYs, plotter.XY{X: q.Level, Y: 100 * q.Accuracy})
				pts.YErrors = append(pts.YErrors, struct{ Low, High float64 }{100 * (q.Accuracy - q.CI.Lo), 100 * (q.CI.Hi - q.Accuracy)})
			}
			if len(s) == 0 {
				continue
			}
			name := ""
			if ki == 0 {
				name = c.Model
			}
			if err := addSeriesStyled(p, mi, name, pts, mi >= len(curves)-dashed); err != nil {
				return nil, err
			}
		}
		pctAxis(&p.Y, lo)
		p.Legend.Top = false
		p.Legend.Left = true
		p.Add(plotter.NewGrid())
		grid[ki/cols] = append(grid[ki/cols], p)
	}
	return renderPNG(grid, vg.Length(cols)*2.6*vg.Inch, vg.Length(rows)*2.6*vg.Inch)
}

// kindTitles are panel titles for the datasets perturbation names.
var kindTitles = map[string]string{
	"noise": "Gaussian noise", "blur": "Gaussian blur", "contrast": "contrast scaling",
	"shift": "shift", "rot": "rotation", "scale": "scaling",
}

// LabelFigure draws test accuracy against labelled images per class (log
// scale), one line per curve; with repeats, the mean accuracy and the mean
// Wilson bounds over repeats.
func LabelFigure(curves []*LabelCurve, title string) ([]byte, error) {
	if len(curves) == 0 {
		return nil, fmt.Errorf("eval: label-efficiency figure with no curves")
	}
	p := newPlot(title, "labelled training images per class (log scale)", "test accuracy (%)")
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	lo := 100.0
	var xs []float64
	for ci, c := range curves {
		type agg struct{ acc, lo, hi, n float64 }
		by := map[int]*agg{}
		for _, q := range c.Points {
			a := by[q.PerClass]
			if a == nil {
				a = &agg{}
				by[q.PerClass] = a
			}
			a.acc += q.Accuracy
			a.lo += q.CI.Lo
			a.hi += q.CI.Hi
			a.n++
		}
		keys := make([]int, 0, len(by))
		for k := range by {
			keys = append(keys, k)
		}
		sort.Ints(keys)
		pts := pointsWithCI{}
		for _, k := range keys {
			a := by[k]
			acc, l, h := a.acc/a.n, a.lo/a.n, a.hi/a.n
			pts.XYs = append(pts.XYs, plotter.XY{X: float64(k), Y: 100 * acc})
			pts.YErrors = append(pts.YErrors, struct{ Low, High float64 }{100 * (acc - l), 100 * (h - acc)})
			lo = min(lo, 100*l)
			xs = append(xs, float64(k))
		}
		if err := addSeries(p, ci, c.Model, pts); err != nil {
			return nil, err
		}
	}
	// Ticks at the measured sizes read better than decades on a short range.
	sort.Float64s(xs)
	var ticks []plot.Tick
	for i, x := range xs {
		if i == 0 || x != xs[i-1] {
			ticks = append(ticks, plot.Tick{Value: x, Label: fmt.Sprint(x)})
		}
	}
	p.X.Tick.Marker = plot.ConstantTicks(ticks)
	p.X.Min, p.X.Max = xs[0]/1.25, xs[len(xs)-1]*1.25
	pctAxis(&p.Y, lo)
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.XOffs = vg.Points(6)
	p.Legend.YOffs = -vg.Points(4)
	p.Add(plotter.NewGrid())
	return renderPNG([][]*plot.Plot{{p}}, 6*vg.Inch, 4.2*vg.Inch)
}

// PerClassFigure draws per-class F1 as grouped bars, one group per class and
// one bar per model. All metrics must share the same classes.
func PerClassFigure(names []string, ms []*Metrics, title string) ([]byte, error) {
	if len(ms) == 0 || len(names) != len(ms) {
		return nil, fmt.Errorf("eval: per-class figure with %d names for %d results", len(names), len(ms))
	}
	classes := ms[0].Classes
	vals := make([]plotter.Values, len(ms))
	for i, m := range ms {
		if len(m.Classes) != len(classes) {
			return nil, fmt.Errorf("eval: per-class figure: result %s has %d classes, %s has %d", names[i], len(m.Classes), names[0], len(classes))
		}
		vals[i] = make(plotter.Values, len(classes))
		for c, s := range m.PerClass {
			vals[i][c] = 100 * s.F1
		}
	}
	return groupedBars(title, "class", "F1 score (%)", classes, names, vals)
}

// groupedBars draws percentages vals[series][group] as grouped bars, one
// group per label and one bar per series, on a 0-100 axis with headroom for
// the legend.
func groupedBars(title, xlabel, ylabel string, groups, names []string, vals []plotter.Values) ([]byte, error) {
	p := newPlot(title, xlabel, ylabel)
	groupW := vg.Points(36)
	barW := groupW / vg.Length(len(vals))
	for i, v := range vals {
		bars, err := plotter.NewBarChart(v, barW)
		if err != nil {
			return nil, err
		}
		bars.Color = seriesColor(i)
		bars.LineStyle.Width = 0
		bars.Offset = barW*vg.Length(i) - groupW/2 + barW/2
		p.Add(bars)
		p.Legend.Add(names[i], bars)
	}
	var ticks []plot.Tick
	for c, name := range groups {
		ticks = append(ticks, plot.Tick{Value: float64(c), Label: name})
	}
	p.X.Tick.Marker = plot.ConstantTicks(ticks)
	tiltTicks(&p.X)
	// Headroom above 100% holds the legend clear of the bars.
	p.Y.Min, p.Y.Max = 0, 100+12*float64(len(vals))
	p.Y.Tick.Marker = plot.ConstantTicks(percentTicks{20}.Ticks(0, 100))
	p.X.Min, p.X.Max = -0.7, float64(len(groups))-0.3
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.XOffs = vg.Points(6)
	grid := plotter.NewGrid()
	grid.Vertical.Width = 0
	p.Add(grid)
	w := vg.Length(len(groups))*groupW*1.3 + 1.5*vg.Inch
	return renderPNG([][]*plot.Plot{{p}}, max(w, 6*vg.Inch), 4*vg.Inch)
}

// ReliabilityFigure draws accuracy against mean confidence of each
// non-empty calibration bin, one line per model, with the diagonal of
// perfect calibration.
func ReliabilityFigure(names []string, ms []*Metrics, title string) ([]byte, error) {
	if len(ms) == 0 || len(names) != len(ms) {
		return nil, fmt.Errorf("eval: reliability figure with %d names for %d results", len(names), len(ms))
	}
	p := newPlot(title, "confidence: mean top-class probability in bin (%)", "accuracy in bin (%)")
	diag, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 100, Y: 100}})
	if err != nil {
		return nil, err
	}
	diag.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
	diag.Color = color.Gray{0x80}
	p.Add(diag)
	p.Legend.Add("perfect calibration", diag)
	for i, m := range ms {
		var xy plotter.XYs
		var counts []int
		maxCount := 1
		for _, b := range m.Bins {
			if b.Count > 0 {
				xy = append(xy, plotter.XY{X: 100 * b.Confidence, Y: 100 * b.Accuracy})
				counts = append(counts, b.Count)
				maxCount = max(maxCount, b.Count)
			}
		}
		line, pts, err := plotter.NewLinePoints(xy)
		if err != nil {
			return nil, err
		}
		line.Color, pts.Color = seriesColor(i), seriesColor(i)
		line.Width = vg.Points(1)
		pts.Shape = seriesGlyphs[i%len(seriesGlyphs)]
		// Marker area ∝ the bin's sample count, so sparse bins read as such.
		style := pts.GlyphStyle
		pts.GlyphStyleFunc = func(j int) draw.GlyphStyle {
			g := style
			g.Radius = vg.Points(1.5 + 5*math.Sqrt(float64(counts[j])/float64(maxCount)))
			return g
		}
		p.Add(line, pts)
		p.Legend.Add(fmt.Sprintf("%s (ECE %.3f)", names[i], m.ECE), line, pts)
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 100, 0, 100
	p.X.Tick.Marker = percentTicks{20}
	p.Y.Tick.Marker = percentTicks{20}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(8), -vg.Points(4)
	p.Add(plotter.NewGrid())
	return renderPNG([][]*plot.Plot{{p}}, 5.5*vg.Inch, 5*vg.Inch)
}

// InvarianceFigure draws, per front-end channel, the phase correlation
// (top) and the F1/F0 modulation ratio on a log axis with the simple/complex
// boundary at 1 (bottom, Skottun et al. 1991). labels name the channels on
// the x axis (e.g. "E0" for energy channel 0); nil numbers them.
func InvarianceFigure(rows []ChannelInvariance, labels []string, title string) ([]byte, error) {
	if len(rows) == 0 {
		return nil, fmt.Errorf("eval: invariance figure with no channels")
	}
	if labels != nil && len(labels) != len(rows) {
		return nil, fmt.Errorf("eval: invariance figure: %d labels for %d channels", len(labels), len(rows))
	}
	barW := vg.Points(max(2, min(14, 360/float64(len(rows)))))
	phase := make(plotter.Values, len(rows))
	shift := make(plotter.Values, len(rows))
	modul := make(plotter.XYs, len(rows))
	for i, r := range rows {
		phase[i] = r.PhaseCorr
		shift[i] = r.ShiftCorr
		// Log axis: keep the cap and a floor of 1e-3 visible.
		modul[i] = plotter.XY{X: float64(i), Y: math.Min(MaxModulation, math.Max(1e-3, r.Modulation))}
	}
	top := newPlot(title, "", "correlation")
	pb, err := plotter.NewBarChart(phase, barW/2)
	if err != nil {
		return nil, err
	}
	pb.Color, pb.LineStyle.Width, pb.Offset = seriesColor(0), 0, -barW/4
	sb, err := plotter.NewBarChart(shift, barW/2)
	if err != nil {
		return nil, err
	}
	sb.Color, sb.LineStyle.Width, sb.Offset = seriesColor(1), 0, barW/4
	top.Add(pb, sb)
	top.Legend.Add("phase φ vs φ+π/2, centre response", pb)
	top.Legend.Add("1 px shift, whole map", sb)
	top.Legend.Top, top.Legend.Left = true, true
	top.Legend.XOffs = vg.Points(6)
	// Headroom above 1 keeps the legend clear of the bars.
	top.Y.Min, top.Y.Max = math.Min(0, math.Floor(minOf(phase, shift)*5+1e-6)/5), 1.5
	var ct []plot.Tick
	for v := top.Y.Min; v <= 1+1e-9; v += 0.2 {
		ct = append(ct, plot.Tick{Value: v, Label: strconv.FormatFloat(math.Round(v*10)/10, 'f', 1, 64)})
	}
	top.Y.Tick.Marker = plot.ConstantTicks(ct)
	zero, err := plotter.NewLine(plotter.XYs{{X: -0.5, Y: 0}, {X: float64(len(rows)) - 0.5, Y: 0}})
	if err != nil {
		return nil, err
	}
	zero.Color = color.Gray{0x90}
	top.Add(zero)

	bot := newPlot("", "front-end channel", "F1/F0 (log scale)")
	bot.Y.Scale = plot.LogScale{}
	bot.Y.Tick.Marker = plot.LogTicks{Prec: -1}
	sc, err := plotter.NewScatter(modul)
	if err != nil {
		return nil, err
	}
	sc.Color, sc.Shape, sc.Radius = seriesColor(2), draw.CircleGlyph{}, vg.Points(2.5)
	one, err := plotter.NewLine(plotter.XYs{{X: -0.5, Y: 1}, {X: float64(len(rows)) - 0.5, Y: 1}})
	if err != nil {
		return nil, err
	}
	one.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
	one.Color = color.Gray{0x60}
	bot.Add(one, sc)
	bot.Legend.Add("F1/F0 at preferred grating", sc)
	bot.Legend.Add("simple (>1) / complex (<1)", one)
	bot.Legend.Top, bot.Legend.Left = true, false
	bot.Y.Min, bot.Y.Max = 1e-3, MaxModulation*30
	var ticks []plot.Tick
	step := max(1, len(rows)/24)
	for i := range rows {
		if i%step != 0 {
			continue
		}
		l := fmt.Sprint(i)
		if labels != nil {
			l = labels[i]
		}
		ticks = append(ticks, plot.Tick{Value: float64(i), Label: l})
	}
	for _, p := range []*plot.Plot{top, bot} {
		p.X.Tick.Marker = plot.ConstantTicks(ticks)
		p.X.Min, p.X.Max = -0.5, float64(len(rows))-0.5
		p.X.Tick.Label.Rotation = math.Pi / 2
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YCenter
		p.X.Tick.Label.Font.Size = vg.Points(8)
	}
	return renderPNG([][]*plot.Plot{{top}, {bot}}, 7*vg.Inch, 5.5*vg.Inch)
}

func minOf(vs ...plotter.Values) float64 {
	m := math.Inf(1)
	for _, v := range vs {
		for _, x := range v {
			m = math.Min(m, x)
		}
	}
	return m
}

// BankMosaicFigure draws the AtomMosaic of each bank side by side, each
// titled with its name, kernel count and largest kernel size.
func BankMosaicFigure(panels []BankPanel) ([]byte, error) {
	if len(panels) == 0 {
		return nil, fmt.Errorf("eval: mosaic figure with no banks")
	}
	row := make([]*plot.Plot, len(panels))
	for i, b := range panels {
		if b.Bank == nil {
			return nil, fmt.Errorf("eval: mosaic panel %q has no bank", b.Name)
		}
		img, err := AtomMosaic(b.Bank, 0, 4)
		if err != nil {
			return nil, fmt.Errorf("eval: mosaic of %s: %w", b.Name, err)
		}
		p := newPlot(fmt.Sprintf("%s: %d kernels, up to %d×%d px", b.Name, len(b.Bank.Kernels), b.Bank.MaxSize(), b.Bank.MaxSize()), "", "")
		sz := img.Bounds().Size()
		p.Add(plotter.NewImage(img, 0, 0, float64(sz.X), float64(sz.Y)))
		p.HideAxes()
		// Keep the mosaic square-pixelled: pad the shorter data range.
		side := float64(max(sz.X, sz.Y))
		p.X.Min, p.X.Max = -(side-float64(sz.X))/2, float64(sz.X)+(side-float64(sz.X))/2
		p.Y.Min, p.Y.Max = -(side-float64(sz.Y))/2, float64(sz.Y)+(side-float64(sz.Y))/2
		row[i] = p
	}
	n := vg.Length(len(panels))
	return renderPNG([][]*plot.Plot{row}, n*3.6*vg.Inch, 3.9*vg.Inch)
}
