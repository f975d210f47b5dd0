package eval

import (
	"bytes"
	"image/png"
	"math"
	"testing"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// TestAtomMosaicLayout: with per-kernel scaling, a kernel's zero weight is
// mid-grey 128, its largest positive weight white and its most negative
// black; tiles sit at gap + index·(size·scale + gap).
func TestAtomMosaicLayout(t *testing.T) {
	k := func(w ...float32) v1layer.Kernel {
		return v1layer.Kernel{Size: 3, W: w, Meta: v1layer.Channel{Pair: -1}}
	}
	bank := &v1layer.Bank{Kernels: []v1layer.Kernel{
		k(0, 0, 0, 0, 2, 0, 0, 0, -1),
		k(-3, 0, 0, 0, 0, 0, 0, 0, 1),
		k(1, 1, 1, 1, 1, 1, 1, 1, 1),
	}}
	img, err := AtomMosaic(bank, 2, 2)
	if err != nil {
		t.Fatal(err)
	}
	const tile = 3*2 + 2
	if w, h := img.Bounds().Dx(), img.Bounds().Dy(); w != 2*tile+2 || h != 2*tile+2 {
		t.Fatalf("mosaic %d×%d; want %d×%d", w, h, 2*tile+2, 2*tile+2)
	}
	at := func(kernel, r, c int) uint8 {
		x := 2 + (kernel%2)*tile + c*2
		y := 2 + (kernel/2)*tile + r*2
		return img.GrayAt(x, y).Y
	}
	if at(0, 1, 1) != 255 || at(0, 0, 0) != 128 || at(0, 2, 2) != 64 {
		t.Errorf("kernel 0: centre %d (want 255), zero %d (want 128), −½max %d (want 64)", at(0, 1, 1), at(0, 0, 0), at(0, 2, 2))
	}
	if at(1, 0, 0) != 0 || at(2, 1, 1) != 255 {
		t.Errorf("kernel 1 min %d (want 0), constant kernel %d (want 255)", at(1, 0, 0), at(2, 1, 1))
	}
	if _, err := AtomMosaic(&v1layer.Bank{}, 0, 0); err == nil {
		t.Error("empty bank: no error")
	}
}

// TestBankHistogramsPNG draws the histograms of a report from fitted Gabor
// parameters and checks the PNG decodes at 12×3.5 inches at figDPI.
func TestBankHistogramsPNG(t *testing.T) {
	rep := &learn.BankReport{MedianFreqBandwidth: 1.4, MedianOrientationBandwidth: 40}
	for i := 0; i < 20; i++ {
		rep.Fits = append(rep.Fits, learn.GaborFit{Orientation: float64(i) * math.Pi / 20, Wavelength: 6,
			SigmaX: 2 + 0.1*float64(i), SigmaY: 3, R2: 0.9})
	}
	b, err := BankHistogramsPNG(rep)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if w, h := img.Bounds().Dx(), img.Bounds().Dy(); w != 12*figDPI || h != int(3.5*figDPI) {
		t.Errorf("figure %d×%d; want %d×%d", w, h, 12*figDPI, int(3.5*figDPI))
	}
	for i := range rep.Fits {
		rep.Fits[i].R2 = 0.1
	}
	if _, err := BankHistogramsPNG(rep); err == nil {
		t.Error("no Gabor-like atoms: no error")
	}
}
