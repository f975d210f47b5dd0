package eval

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// AtomMosaic tiles the kernels of a bank in a grid of cols columns (0 means
// ⌈√n⌉), each kernel magnified scale times (0 means 4) with a 1-pixel
// separator per magnified pixel. Each kernel is scaled on its own so that 0
// is mid-grey (128) and its largest |w| is black or white, the usual way of
// showing learned receptive fields (Olshausen & Field 1996, Fig. 4). Kernels
// of different sizes are centred in tiles of the largest size.
func AtomMosaic(bank *v1layer.Bank, cols, scale int) (*image.Gray, error) {
	if bank == nil || len(bank.Kernels) == 0 {
		return nil, fmt.Errorf("eval: AtomMosaic needs a bank with kernels")
	}
	n := len(bank.Kernels)
	if cols <= 0 {
		cols = int(math.Ceil(math.Sqrt(float64(n))))
	}
	if scale <= 0 {
		scale = 4
	}
	s := bank.MaxSize()
	rows := (n + cols - 1) / cols
	gap := scale
	tile := s*scale + gap
	img := image.NewGray(image.Rect(0, 0, cols*tile+gap, rows*tile+gap))
	for i := range img.Pix {
		img.Pix[i] = 64 // dark-grey frame between tiles
	}
	for i, k := range bank.Kernels {
		if len(k.W) != k.Size*k.Size {
			return nil, fmt.Errorf("eval: AtomMosaic kernel %d has %d weights; want %d", i, len(k.W), k.Size*k.Size)
		}
		var m float32
		for _, v := range k.W {
			m = max(m, float32(math.Abs(float64(v))))
		}
		if m == 0 {
			m = 1
		}
		off := (s - k.Size) / 2
		x0 := gap + (i%cols)*tile
		y0 := gap + (i/cols)*tile
		for r := 0; r < s; r++ {
			for c := 0; c < s; c++ {
				v := uint8(128)
				kr, kc := r-off, c-off
				if kr >= 0 && kr < k.Size && kc >= 0 && kc < k.Size {
					v = uint8(math.Round(127.5 + 127.5*float64(k.W[kr*k.Size+kc]/m)))
				}
				for dy := 0; dy < scale; dy++ {
					row := img.Pix[(y0+r*scale+dy)*img.Stride+x0+c*scale:]
					for dx := 0; dx < scale; dx++ {
						row[dx] = v
					}
				}
			}
		}
	}
	return img, nil
}

// AtomMosaicPNG encodes AtomMosaic as PNG.
func AtomMosaicPNG(bank *v1layer.Bank, cols, scale int) ([]byte, error) {
	img, err := AtomMosaic(bank, cols, scale)
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		return nil, fmt.Errorf("eval: encoding mosaic: %w", err)
	}
	return buf.Bytes(), nil
}

// BankHistogramsPNG draws three histograms side by side from a learned-bank
// report, over the Gabor-like atoms (fit R² ≥ learn.GaborLikeR2): fitted
// orientation (degrees, 12 bins of 15°), spatial-frequency bandwidth
// (octaves, bins of 0.25 from 0 to 4; larger and low-pass fits go in the
// last bin) and orientation bandwidth (degrees, bins of 10° from 0 to 180),
// each with its median in the title. The macaque V1 figures they are read
// against are in learn's documentation.
func BankHistogramsPNG(rep *learn.BankReport) ([]byte, error) {
	if rep == nil || len(rep.Fits) == 0 {
		return nil, fmt.Errorf("eval: BankHistogramsPNG needs a report with fits")
	}
	var ori, sfb, orb plotter.Values
	for _, f := range rep.Fits {
		if f.R2 < learn.GaborLikeR2 {
			continue
		}
		ori = append(ori, f.Orientation*180/math.Pi)
		sfb = append(sfb, math.Min(f.FreqBandwidth(), 3.999))
		orb = append(orb, math.Min(f.OrientationBandwidth(), 179.9))
	}
	if len(ori) == 0 {
		return nil, fmt.Errorf("eval: no atom of %d has a Gabor fit with R² ≥ %.1f; nothing to histogram", len(rep.Fits), learn.GaborLikeR2)
	}
	h1, err := histogram(fmt.Sprintf("orientation (%d atoms)", len(ori)), "orientation θ (degrees)", ori, 0, 180, 12)
	if err != nil {
		return nil, err
	}
	h2, err := histogram(fmt.Sprintf("SF bandwidth, median %.2f oct", rep.MedianFreqBandwidth), "bandwidth (octaves)", sfb, 0, 4, 16)
	if err != nil {
		return nil, err
	}
	h3, err := histogram(fmt.Sprintf("orientation bandwidth, median %.0f°", rep.MedianOrientationBandwidth), "bandwidth (degrees)", orb, 0, 180, 18)
	if err != nil {
		return nil, err
	}
	return renderPNG([][]*plot.Plot{{h1, h2, h3}}, 12*vg.Inch, 3.5*vg.Inch)
}

// histogram builds one histogram with fixed bins [lo, hi).
func histogram(title, xlabel string, v plotter.Values, lo, hi float64, bins int) (*plot.Plot, error) {
	p := newPlot(title, xlabel, "atoms")
	// Fixed bin edges: add the counts ourselves so every figure uses the same edges.
	w := (hi - lo) / float64(bins)
	bars := make([]plotter.HistogramBin, bins)
	for i := range bars {
		bars[i] = plotter.HistogramBin{Min: lo + float64(i)*w, Max: lo + float64(i+1)*w}
	}
	for _, x := range v {
		i := int((x - lo) / w)
		if i >= 0 && i < bins {
			bars[i].Weight++
		}
	}
	h := &plotter.Histogram{Bins: bars, FillColor: seriesColor(0), LineStyle: plotter.DefaultLineStyle}
	h.LineStyle.Color = color.White
	p.Add(h)
	p.X.Min, p.X.Max = lo, hi
	return p, nil
}
