package render

import (
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Layout of a figure, in multiples of the base font size.
const (
	titleScale   = 1.3  // figure title
	panelScale   = 0.9  // panel titles of a grid
	tickScale    = 0.85 // tick labels
	smallScale   = 0.8  // curve labels, legends, annotations
	noteScale    = 0.75 // the caution
	marginScale  = 0.8  // blank margin round the figure
	gapScale     = 0.6  // between title, plots and note
	panelPadding = 1.2  // between panels of a grid
)

// Drawer is anything that draws itself on a canvas: a *Figure or a
// *plot.Plot.
type Drawer interface {
	Draw(c draw.Canvas)
}

// Figure is a finished chart: one plot or a grid of panels under a title,
// with the caution in small type at the bottom. The constructors fill it;
// a caller may adjust the plots before writing it.
type Figure struct {
	Title   string
	Panels  [][]*plot.Plot // row-major; a nil entry leaves its tile empty
	Caution string
	// XLabel and YLabel, when not empty, are written once below and left
	// of a grid of panels, for axes the panels share.
	XLabel, YLabel string

	fontSize vg.Length // base font size; 0 means DefaultFontSize
	height   vg.Length // preferred height when the caller gives none; 0 means DefaultHeight
}

// Draw draws the figure on c.
func (f *Figure) Draw(c draw.Canvas) {
	base := f.fontSize
	if base <= 0 {
		base = DefaultFontSize
	}
	c.SetColor(color.White)
	c.Fill(c.Rectangle.Path())

	m := base * marginScale
	c = draw.Crop(c, m, -m, m, -m)
	gap := base * gapScale

	if f.Title != "" {
		sty := textStyle(base*titleScale, inkColor)
		sty.XAlign = draw.XCenter
		sty.YAlign = draw.YTop
		c.FillText(sty, vg.Point{X: c.Center().X, Y: c.Max.Y}, f.Title)
		c.Max.Y -= sty.Height(f.Title) + gap
	}
	if f.Caution != "" {
		sty := textStyle(base*noteScale, noteColor)
		sty.YAlign = draw.YBottom
		lines := wrapText(sty, f.Caution, c.Max.X-c.Min.X)
		y := c.Min.Y
		for i := len(lines) - 1; i >= 0; i-- {
			c.FillText(sty, vg.Point{X: c.Min.X, Y: y}, lines[i])
			y += sty.FontExtents().Height
		}
		c.Min.Y = y + gap
	}

	if f.XLabel != "" {
		sty := textStyle(base, inkColor)
		sty.XAlign = draw.XCenter
		sty.YAlign = draw.YBottom
		c.FillText(sty, vg.Point{X: c.Center().X, Y: c.Min.Y}, f.XLabel)
		c.Min.Y += sty.Height(f.XLabel) + gap/2
	}
	if f.YLabel != "" {
		sty := textStyle(base, inkColor)
		sty.Rotation = math.Pi / 2
		sty.XAlign = draw.XCenter
		sty.YAlign = draw.YTop
		c.FillText(sty, vg.Point{X: c.Min.X, Y: c.Center().Y}, f.YLabel)
		c.Min.X += sty.FontExtents().Height + gap/2
	}
	rows := len(f.Panels)
	cols := 0
	for _, r := range f.Panels {
		cols = max(cols, len(r))
	}
	if rows == 0 || cols == 0 {
		return
	}
	if rows == 1 && cols == 1 {
		if p := f.Panels[0][0]; p != nil {
			p.Draw(c)
		}
		return
	}
	grid := make([][]*plot.Plot, rows)
	for i, r := range f.Panels {
		grid[i] = make([]*plot.Plot, cols)
		copy(grid[i], r)
	}
	pad := base * panelPadding
	tiles := draw.Tiles{Rows: rows, Cols: cols, PadX: pad, PadY: pad}
	canvases := plot.Align(grid, tiles, c)
	for i, r := range grid {
		for j, p := range r {
			if p != nil {
				p.Draw(canvases[i][j])
			}
		}
	}
}

// wrapText breaks s into lines no wider than width, at spaces.
func wrapText(sty text.Style, s string, width vg.Length) []string {
	var lines []string
	for _, para := range strings.Split(s, "\n") {
		words := strings.Fields(para)
		line := ""
		for _, w := range words {
			try := w
			if line != "" {
				try = line + " " + w
			}
			if line != "" && sty.Width(try) > width {
				lines = append(lines, line)
				line = w
				continue
			}
			line = try
		}
		lines = append(lines, line)
	}
	return lines
}

// textStyle returns a sans-serif style of the given size. All text is of
// regular weight: vgpdf in gonum/plot v0.17.0 fails on bold faces
// ("undefined font"), so size alone sets titles apart.
func textStyle(size vg.Length, c color.Color) text.Style {
	f := font.Font{Typeface: "Liberation", Variant: "Sans", Size: size}
	return text.Style{Color: c, Font: f, Handler: plot.DefaultTextHandler}
}

// newPlot returns a plot in growband's house style: sans-serif text sized
// from base, dark grey axes, no title (the figure carries it).
func newPlot(base vg.Length) *plot.Plot {
	p := plot.New()
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		lab := textStyle(base, inkColor)
		lab.XAlign, lab.YAlign = ax.Label.TextStyle.XAlign, ax.Label.TextStyle.YAlign
		ax.Label.TextStyle = lab
		tick := textStyle(base*tickScale, inkColor)
		tick.XAlign, tick.YAlign = ax.Tick.Label.XAlign, ax.Tick.Label.YAlign
		ax.Tick.Label = tick
		ax.Color = inkColor
		ax.Tick.Color = inkColor
		ax.Tick.Length = base * 0.4
		ax.Padding = 0
		ax.Label.Padding = base * 0.3
	}
	p.X.Tick.Marker = niceTicks{target: xTickTarget}
	p.Y.Tick.Marker = niceTicks{target: yTickTarget}
	p.Title.TextStyle = textStyle(base*panelScale, inkColor)
	p.Title.TextStyle.XAlign = draw.XCenter
	p.Title.TextStyle.YAlign = draw.YTop
	p.Title.Padding = base * 0.4
	p.Legend.TextStyle = textStyle(base*smallScale, inkColor)
	p.Legend.ThumbnailWidth = base * 1.6
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.Padding = base * 0.2
	p.Legend.XOffs = base * 0.6
	p.Legend.YOffs = -base * 0.4
	return p
}

// addGrid adds the light grid unless the settings leave it out.
func addGrid(p *plot.Plot, s *settings) {
	if s.noGrid {
		return
	}
	g := &gridLines{style: draw.LineStyle{Color: gridColor, Width: vg.Points(0.5)}}
	p.Add(g)
}

// gridLines draws lines at the major ticks of both axes. Unlike
// plotter.Grid it skips the tick at the axis itself, which would double
// the axis line.
type gridLines struct {
	style draw.LineStyle
}

func (g *gridLines) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for _, t := range p.X.Tick.Marker.Ticks(p.X.Min, p.X.Max) {
		if t.IsMinor() || t.Value <= p.X.Min || t.Value > p.X.Max {
			continue
		}
		x := trX(t.Value)
		c.StrokeLine2(g.style, x, c.Min.Y, x, c.Max.Y)
	}
	for _, t := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
		if t.IsMinor() || t.Value <= p.Y.Min || t.Value > p.Y.Max {
			continue
		}
		y := trY(t.Value)
		c.StrokeLine2(g.style, c.Min.X, y, c.Max.X, y)
	}
}

// capitalize upper-cases the first letter of an ASCII-initial label.
func capitalize(s string) string {
	if s == "" {
		return s
	}
	if b := s[0]; b >= 'a' && b <= 'z' {
		return string(b-'a'+'A') + s[1:]
	}
	return s
}

// withUnit returns "Name (unit)", or "Name" when unit is empty.
func withUnit(name, unit string) string {
	if unit == "" {
		return name
	}
	return name + " (" + unit + ")"
}

// joinTitle joins non-empty parts with an em dash.
func joinTitle(parts ...string) string {
	var keep []string
	for _, p := range parts {
		if p != "" {
			keep = append(keep, p)
		}
	}
	return strings.Join(keep, " — ")
}

// legendPad is the margin of the translucent box behind a legend.
const legendPad = vg.Length(3)

// legendBacking draws a translucent white box where the plot's top-left
// legend will be drawn, so the legend reads over data. Add it last.
type legendBacking struct{}

func (legendBacking) Plot(c draw.Canvas, p *plot.Plot) {
	size := p.Legend.Rectangle(c).Size()
	if size.Y <= 0 {
		return
	}
	min := vg.Point{X: c.Min.X + p.Legend.XOffs - legendPad, Y: c.Max.Y + p.Legend.YOffs - size.Y - legendPad}
	max := vg.Point{X: c.Min.X + p.Legend.XOffs + size.X + legendPad, Y: c.Max.Y + p.Legend.YOffs + legendPad}
	var box vg.Path
	box.Move(min)
	box.Line(vg.Point{X: max.X, Y: min.Y})
	box.Line(max)
	box.Line(vg.Point{X: min.X, Y: max.Y})
	box.Close()
	c.SetColor(color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: backingAlpha})
	c.Fill(box)
}
