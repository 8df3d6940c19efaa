package render

import (
	"math"

	"gonum.org/v1/plot/vg"
)

// Default chart size and look.
const (
	DefaultWidth    = 20 * vg.Centimeter
	DefaultHeight   = 14 * vg.Centimeter
	DefaultHue      = 188 // degrees on the HSL colour wheel: a slate teal
	DefaultFontSize = vg.Length(10)
)

// Option changes one render setting. Options are applied in order; a
// non-positive, NaN or otherwise unusable value keeps the default.
type Option func(*settings)

// settings holds the render settings; the zero value means the defaults.
type settings struct {
	hue      float64
	hueSet   bool
	fontSize vg.Length
	title    string
	binWidth float64
	columns  int
	noGrid   bool
	ageMax   int // most labelled age intervals; 0 for the default
}

// WithHue sets the hue (degrees, any real number; taken modulo 360) of the
// chart's one colour ramp.
func WithHue(degrees float64) Option {
	return func(s *settings) {
		if math.IsNaN(degrees) || math.IsInf(degrees, 0) {
			return
		}
		s.hue = math.Mod(math.Mod(degrees, 360)+360, 360)
		s.hueSet = true
	}
}

// WithFontSize sets the base font size; titles, tick labels and notes scale
// from it.
func WithFontSize(size vg.Length) Option {
	return func(s *settings) {
		if size > 0 && !math.IsInf(float64(size), 0) {
			s.fontSize = size
		}
	}
}

// WithAgeIntervals caps the labelled age ticks of a chart drawn small (on a
// phone screen, say) at n intervals: the age steps of the unit are tried
// from the finest, and the first that divides the range into at most n
// parts is used (0–60 months at n = 5 ticks every 12). n <= 0 keeps the
// default of 11.
func WithAgeIntervals(n int) Option {
	return func(s *settings) { s.ageMax = n }
}

// WithTitle replaces the title a constructor would compose.
func WithTitle(title string) Option {
	return func(s *settings) { s.title = title }
}

// WithBinWidth sets the histogram bin width, in z units, of the z-score
// distribution chart. By default it follows the Freedman–Diaconis rule,
// rounded to a tidy value.
func WithBinWidth(width float64) Option {
	return func(s *settings) {
		if width > 0 && !math.IsInf(width, 0) {
			s.binWidth = width
		}
	}
}

// WithColumns sets the number of panel columns of the worm plot. By default
// the panels fill a near-square grid.
func WithColumns(n int) Option {
	return func(s *settings) {
		if n > 0 {
			s.columns = n
		}
	}
}

// WithoutGrid leaves out the light grid.
func WithoutGrid() Option {
	return func(s *settings) { s.noGrid = true }
}

func newSettings(opts []Option) *settings {
	s := &settings{}
	for _, o := range opts {
		if o != nil {
			o(s)
		}
	}
	return s
}

func (s *settings) hueDeg() float64 {
	if s == nil || !s.hueSet {
		return DefaultHue
	}
	return s.hue
}

func (s *settings) base() vg.Length {
	if s == nil || s.fontSize <= 0 {
		return DefaultFontSize
	}
	return s.fontSize
}
