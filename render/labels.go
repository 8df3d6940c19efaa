package render

import (
	"image/color"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// labelGap is the least distance between the baselines of two curve labels,
// as a multiple of the label font's height: a little air between lines.
const labelGap = 1.05

// labelRoom is the share of the age range added right of the curves to hold
// their labels inside the plot area.
const labelRoom = 0.07

// endLabel is one curve's tag, placed just right of its last point.
type endLabel struct {
	x, y  float64
	text  string
	color color.Color
}

// pointNote is a short text tied to a marker, such as a measurement's
// z-score.
type pointNote struct {
	x, y  float64
	text  string
	color color.Color
}

// endLabels draws curve tags at the right ends of the curves, nudged apart
// vertically (in canvas units, so at any output size) so none overlap, and
// then the point notes, each at the first spot round its marker that
// overlaps no tag and no earlier note.
type endLabels struct {
	labels    []endLabel
	style     text.Style
	pad       vg.Length // horizontal space between a curve's end and its tag
	notes     []pointNote
	noteStyle text.Style
	clear     vg.Length // distance from a marker's centre to its notes
}

func (l *endLabels) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	var taken []vg.Rectangle
	if len(l.labels) > 0 {
		want := make([]float64, len(l.labels))
		for i, e := range l.labels {
			want[i] = float64(trY(e.y))
		}
		h := float64(l.style.FontExtents().Height)
		got := spreadApart(want, h*labelGap, float64(c.Min.Y)+h/2, float64(c.Max.Y)-h/2)
		for i, e := range l.labels {
			r := textBox(l.style, e.text, vg.Point{X: trX(e.x) + l.pad, Y: vg.Length(got[i]) - vg.Length(h)/2})
			taken = append(taken, r)
			sty := l.style
			sty.Color = e.color
			fillHaloText(&c, sty, r.Min, e.text)
		}
	}
	for _, n := range l.notes {
		pt := vg.Point{X: trX(n.x), Y: trY(n.y)}
		if !c.Contains(pt) {
			continue
		}
		w := l.noteStyle.Width(n.text)
		h := l.noteStyle.FontExtents().Height
		k := l.clear
		spots := []vg.Point{ // lower-left corners: above right, above left, below right, below left
			{X: pt.X + k*0.7, Y: pt.Y + k*0.7},
			{X: pt.X - k*0.7 - w, Y: pt.Y + k*0.7},
			{X: pt.X + k*0.7, Y: pt.Y - k*0.7 - h},
			{X: pt.X - k*0.7 - w, Y: pt.Y - k*0.7 - h},
		}
		best := textBox(l.noteStyle, n.text, spots[0])
		for _, s := range spots {
			r := textBox(l.noteStyle, n.text, s)
			if inside(r, c.Rectangle) && !overlapsAny(r, taken) {
				best = r
				break
			}
		}
		taken = append(taken, best)
		sty := l.noteStyle
		sty.Color = n.color
		fillHaloText(&c, sty, best.Min, n.text)
	}
}

// textBox returns the box of one line of text whose lower-left corner is at
// min; fillHaloText draws it there.
func textBox(sty text.Style, s string, min vg.Point) vg.Rectangle {
	return vg.Rectangle{Min: min, Max: vg.Point{X: min.X + sty.Width(s), Y: min.Y + sty.FontExtents().Height}}
}

func overlapsAny(r vg.Rectangle, rs []vg.Rectangle) bool {
	for _, o := range rs {
		if r.Min.X < o.Max.X && o.Min.X < r.Max.X && r.Min.Y < o.Max.Y && o.Min.Y < r.Max.Y {
			return true
		}
	}
	return false
}

func inside(r, outer vg.Rectangle) bool {
	return r.Min.X >= outer.Min.X && r.Max.X <= outer.Max.X && r.Min.Y >= outer.Min.Y && r.Max.Y <= outer.Max.Y
}

// spreadApart moves the positions want (in any order) as little as possible,
// in the least-squares sense, so that neighbours are at least gap apart,
// keeping their order; then it shifts them to lie within [lo, hi] when that
// range is wide enough. It returns the new positions in the order of want.
//
// Overlapping labels are merged into clusters spaced exactly gap apart and
// centred on their members' wishes; merged clusters that then overlap a
// neighbour are merged again, until none do.
func spreadApart(want []float64, gap, lo, hi float64) []float64 {
	n := len(want)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return want[idx[a]] < want[idx[b]] })

	type cluster struct {
		first, k int     // first sorted member and count
		sum      float64 // sum of want minus the member's offset j*gap
	}
	bottom := func(c cluster) float64 { return c.sum / float64(c.k) }
	top := func(c cluster) float64 { return bottom(c) + float64(c.k-1)*gap }
	var cs []cluster
	for j, i := range idx {
		cs = append(cs, cluster{first: j, k: 1, sum: want[i]})
		for len(cs) > 1 {
			a, b := cs[len(cs)-2], cs[len(cs)-1]
			if bottom(b)-top(a) >= gap {
				break
			}
			// Re-index b's members after a's: each offset grows by a.k*gap.
			merged := cluster{first: a.first, k: a.k + b.k, sum: a.sum + b.sum - float64(b.k*a.k)*gap}
			cs = append(cs[:len(cs)-2], merged)
		}
	}
	pos := make([]float64, n) // in sorted order
	for _, c := range cs {
		for m := 0; m < c.k; m++ {
			pos[c.first+m] = bottom(c) + float64(m)*gap
		}
	}
	if n > 0 && hi-lo >= float64(n-1)*gap {
		for j := range pos {
			if floor := lo + float64(j)*gap; pos[j] < floor {
				pos[j] = floor
			}
			if j > 0 && pos[j] < pos[j-1]+gap {
				pos[j] = pos[j-1] + gap
			}
		}
		for j := n - 1; j >= 0; j-- {
			if ceil := hi - float64(n-1-j)*gap; pos[j] > ceil {
				pos[j] = ceil
			}
			if j < n-1 && pos[j] > pos[j+1]-gap {
				pos[j] = pos[j+1] - gap
			}
		}
	}
	out := make([]float64, n)
	for j, i := range idx {
		out[i] = pos[j]
	}
	return out
}

// Text backing: small text over lines and bands sits on a translucent white
// box a little larger than the text.
const (
	backingPad   = vg.Length(0.8)
	backingAlpha = 0xc0
)

// fillHaloText writes txt on a translucent white box so it stays legible
// over lines and bands. pt is the lower-left corner of the text's box.
func fillHaloText(c *draw.Canvas, sty text.Style, pt vg.Point, txt string) {
	sty.XAlign = draw.XLeft
	sty.YAlign = draw.YBottom
	r := textBox(sty, txt, pt)
	var box vg.Path
	box.Move(vg.Point{X: r.Min.X - backingPad, Y: r.Min.Y})
	box.Line(vg.Point{X: r.Max.X + backingPad, Y: r.Min.Y})
	box.Line(vg.Point{X: r.Max.X + backingPad, Y: r.Max.Y})
	box.Line(vg.Point{X: r.Min.X - backingPad, Y: r.Max.Y})
	box.Close()
	c.SetColor(color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: backingAlpha})
	c.Fill(box)
	c.FillText(sty, pt, txt)
}
