package render

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// pngDPI is the resolution of PNG output: sharp on screen and in print
// without huge files (a 20 cm chart is about 1200 pixels wide).
const pngDPI = 150

// formats lists the output formats Write accepts.
var formats = []string{"svg", "png", "pdf"}

// Formats returns the output formats Write accepts: svg, png and pdf.
func Formats() []string { return append([]string(nil), formats...) }

// Write draws d at the given size (0 means DefaultWidth, or DefaultHeight
// unless the figure asks for more room, as a worm plot of many groups does)
// and writes it to w in format "svg", "png" or "pdf" (case-insensitive, a
// leading dot allowed). It returns an error wrapping ErrFormat for any other
// format and ErrSize for a negative or non-finite size.
func Write(w io.Writer, d Drawer, format string, width, height vg.Length) error {
	if f, ok := d.(*Figure); ok && height == 0 && f.height > 0 {
		height = f.height
	}
	c, err := newCanvas(format, width, height)
	if err != nil {
		return err
	}
	d.Draw(draw.New(c))
	_, err = c.WriteTo(w)
	return err
}

// Save writes d to the file at path. The format is format when it is not
// empty, else the file's extension. Nothing is written when the format or
// size is bad, so a failed call leaves no partial file behind.
func Save(path string, d Drawer, format string, width, height vg.Length) error {
	if format == "" {
		format = filepath.Ext(path)
	}
	var buf bytes.Buffer
	if err := Write(&buf, d, format, width, height); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return os.WriteFile(path, buf.Bytes(), 0o644)
}

// FormatOf returns the output format named by a file's extension, or an
// error wrapping ErrFormat.
func FormatOf(path string) (string, error) {
	f := normFormat(filepath.Ext(path))
	for _, ok := range formats {
		if f == ok {
			return f, nil
		}
	}
	return "", fmt.Errorf("%q: %w (want %s)", path, ErrFormat, strings.Join(formats, ", "))
}

func normFormat(f string) string {
	return strings.ToLower(strings.TrimPrefix(strings.TrimSpace(f), "."))
}

func newCanvas(format string, width, height vg.Length) (vg.CanvasWriterTo, error) {
	if width == 0 {
		width = DefaultWidth
	}
	if height == 0 {
		height = DefaultHeight
	}
	for _, v := range []vg.Length{width, height} {
		if !(v > 0) || math.IsInf(float64(v), 0) {
			return nil, fmt.Errorf("%v x %v: %w", width, height, ErrSize)
		}
	}
	switch normFormat(format) {
	case "svg":
		return vgsvg.New(width, height), nil
	case "png":
		return vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(width, height), vgimg.UseDPI(pngDPI))}, nil
	case "pdf":
		return pdfCanvas{vgpdf.New(width, height)}, nil
	}
	return nil, fmt.Errorf("%q: %w (want %s)", format, ErrFormat, strings.Join(formats, ", "))
}

// pdfCanvas passes text to vgpdf in Windows-1252, the encoding vgpdf (gonum/plot
// v0.17.0) registers its fonts with; handed UTF-8 it prints "â€”" for an em
// dash. Runes outside Windows-1252 print as "?".
type pdfCanvas struct {
	*vgpdf.Canvas
}

func (c pdfCanvas) FillString(f font.Face, pt vg.Point, s string) {
	c.Canvas.FillString(f, pt, toCP1252(s))
}

// SetColor works round vgpdf (gonum/plot v0.17.0) taking the alpha-
// premultiplied channels of a translucent colour as its straight colour and
// then applying the alpha again, which darkens every translucent fill. It
// hands vgpdf a colour whose RGBA method returns straight channels.
func (c pdfCanvas) SetColor(clr color.Color) {
	if clr != nil {
		if n := color.NRGBA64Model.Convert(clr).(color.NRGBA64); n.A != 0xffff {
			clr = straightColor(n)
		}
	}
	c.Canvas.SetColor(clr)
}

// straightColor is a colour whose RGBA method breaks the color.Color
// convention on purpose and returns straight (not premultiplied) channels;
// it is only ever given to vgpdf, which expects them.
type straightColor color.NRGBA64

func (s straightColor) RGBA() (r, g, b, a uint32) {
	return uint32(s.R), uint32(s.G), uint32(s.B), uint32(s.A)
}

// cp1252High maps the runes Windows-1252 puts at bytes 0x80–0x9F.
var cp1252High = map[rune]byte{
	'€': 0x80, '‚': 0x82, 'ƒ': 0x83, '„': 0x84, '…': 0x85, '†': 0x86, '‡': 0x87,
	'ˆ': 0x88, '‰': 0x89, 'Š': 0x8a, '‹': 0x8b, 'Œ': 0x8c, 'Ž': 0x8e,
	'‘': 0x91, '’': 0x92, '“': 0x93, '”': 0x94, '•': 0x95, '–': 0x96, '—': 0x97,
	'˜': 0x98, '™': 0x99, 'š': 0x9a, '›': 0x9b, 'œ': 0x9c, 'ž': 0x9e, 'Ÿ': 0x9f,
	'−': '-', // minus sign: the hyphen is the nearest glyph in the code page
}

func toCP1252(s string) string {
	ascii := true
	for i := 0; i < len(s); i++ {
		if s[i] >= 0x80 {
			ascii = false
			break
		}
	}
	if ascii {
		return s
	}
	b := make([]byte, 0, len(s))
	for _, r := range s {
		switch {
		case r < 0x80 || (r >= 0xa0 && r <= 0xff):
			b = append(b, byte(r))
		case cp1252High[r] != 0:
			b = append(b, cp1252High[r])
		default:
			b = append(b, '?')
		}
	}
	return string(b)
}
