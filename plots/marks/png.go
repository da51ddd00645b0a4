package marks

import (
	"bytes"
	"image/color"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// PNG renders a w × h page at dpi on a white background with paint and
// returns the PNG bytes. An error from paint is returned as is.
func PNG(w, h vg.Length, dpi int, paint func(draw.Canvas) error) ([]byte, error) {
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(dpi))
	dc := draw.New(img)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	if err := paint(dc); err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}
