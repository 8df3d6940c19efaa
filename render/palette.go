package render

import (
	"image/color"
	"math"
)

// The one-hue ramp. Bands get lighter outward; lines are darker shades of the
// same hue so they read on every band.
const (
	bandSaturation = 0.36  // muted, so the bands stay quiet behind the lines
	bandLightOuter = 0.93  // lightness of the outermost band
	bandLightStep  = 0.095 // lightness drop per band inward, while it fits
	bandLightInner = 0.60  // darkest a band may be, however many there are
	lineSaturation = 0.42
	lineLight      = 0.34 // ordinary centile lines
	medianLight    = 0.18 // the median line, darkest
)

// Neutral and accent colours that sit outside the ramp.
var (
	inkColor     = color.NRGBA{R: 0x26, G: 0x2a, B: 0x2e, A: 0xff} // text and axes
	noteColor    = color.NRGBA{R: 0x55, G: 0x5b, B: 0x60, A: 0xff} // caution text
	gridColor    = color.NRGBA{R: 0x20, G: 0x30, B: 0x38, A: 0x22} // translucent, reads on white and on bands
	scatterColor = color.NRGBA{R: 0x3a, G: 0x3a, B: 0x3a, A: 0x50}
	// Children's trajectories: dark, warm or violet accents that stand apart
	// from the cool ramp; glyph shapes differ too, so colour is not needed to
	// tell them apart.
	accentColors = []color.NRGBA{
		{R: 0x9c, G: 0x45, B: 0x10, A: 0xff}, // sienna
		{R: 0x4b, G: 0x2e, B: 0x83, A: 0xff}, // indigo
		{R: 0x1e, G: 0x1e, B: 0x1e, A: 0xff}, // charcoal
		{R: 0x73, G: 0x5c, B: 0x0c, A: 0xff}, // dark ochre
	}
)

// Palette returns n fill colours of one hue (degrees) for nested centile
// bands, outermost first. Saturation is fixed and lightness falls in equal
// steps from the outermost (lightest) band inward, so the colours differ
// only in lightness; with many bands the steps shrink so the innermost stays
// light enough for dark lines to read on it. It returns nil for n <= 0.
func Palette(hue float64, n int) []color.NRGBA {
	if n <= 0 {
		return nil
	}
	step := bandLightStep
	if n > 1 {
		step = math.Min(step, (bandLightOuter-bandLightInner)/float64(n-1))
	}
	out := make([]color.NRGBA, n)
	for i := range out {
		out[i] = hsl(hue, bandSaturation, bandLightOuter-step*float64(i))
	}
	return out
}

// shade returns a colour of the given hue at lightness l with line saturation.
func shade(hue, l float64) color.NRGBA {
	return hsl(hue, lineSaturation, l)
}

// hsl converts hue (degrees), saturation and lightness in [0, 1] to an
// opaque sRGB colour by the usual hexcone formulas.
func hsl(h, s, l float64) color.NRGBA {
	h = math.Mod(math.Mod(h, 360)+360, 360)
	c := (1 - math.Abs(2*l-1)) * s
	hp := h / 60
	x := c * (1 - math.Abs(math.Mod(hp, 2)-1))
	var r, g, b float64
	switch {
	case hp < 1:
		r, g, b = c, x, 0
	case hp < 2:
		r, g, b = x, c, 0
	case hp < 3:
		r, g, b = 0, c, x
	case hp < 4:
		r, g, b = 0, x, c
	case hp < 5:
		r, g, b = x, 0, c
	default:
		r, g, b = c, 0, x
	}
	m := l - c/2
	return color.NRGBA{R: to8(r + m), G: to8(g + m), B: to8(b + m), A: 0xff}
}

func to8(v float64) uint8 {
	return uint8(math.Round(math.Max(0, math.Min(1, v)) * 255))
}

// withAlpha returns c with its alpha replaced.
func withAlpha(c color.NRGBA, a uint8) color.NRGBA {
	c.A = a
	return c
}
