package eval

import (
	"bytes"
	"io"
	"testing"
	"time"
)

// allocPredictor holds a large temporary buffer for a while in every batch
// call, so the peak-heap sampler has something known to find.
type allocPredictor struct {
	meanPredictor
	bytes int
	hold  time.Duration
}

var sinkBuf []byte

func (a allocPredictor) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	if len(imgs) > 1 {
		sinkBuf = make([]byte, a.bytes)
		for i := 0; i < len(sinkBuf); i += 4096 {
			sinkBuf[i] = 1
		}
		time.Sleep(a.hold)
		sinkBuf = nil
	}
	return a.meanPredictor.PredictBatch(imgs, h, w, workers)
}

func TestMeasureSpeed(t *testing.T) {
	const big = 64 << 20
	test := twoLevelData(300, 8, 8, 0.1)
	extracted := 0
	extract := func(imgs [][]float32, h, w, workers int) error { extracted += len(imgs); return nil }
	p := allocPredictor{meanPredictor{0.5}, big, 20 * time.Millisecond}
	sp, err := MeasureSpeed(p, extract, test.Images, 8, 8, SpeedConfig{Batch: 100, Repeats: 2, LatencySamples: 50})
	if err != nil {
		t.Fatal(err)
	}
	if sp.PredictPerSec <= 0 || sp.ExtractPerSec <= 0 || sp.LatencyP50 <= 0 || sp.LatencyP99 < sp.LatencyP50 {
		t.Errorf("speed %+v; want positive rates and p99 ≥ p50 > 0", sp)
	}
	// warm-up (100) + 2 repeats × 300
	if extracted != 700 {
		t.Errorf("extractor saw %d images; want 700", extracted)
	}
	// The sampler reads every 1 ms and each of the 7 batch calls holds 64 MiB
	// for 20 ms, so even a heavily loaded machine lets it see one of them.
	if sp.HeapPeak < sp.HeapBase+big*3/4 {
		t.Errorf("peak heap %d, base %d; a %d-byte buffer was live for 5 ms", sp.HeapPeak, sp.HeapBase, big)
	}
	// Each batch of 100 sleeps 20 ms, so at most 5000 images/s.
	if sp.PredictPerSec > 5000 {
		t.Errorf("predict %g images/s; each batch of 100 sleeps 20 ms, so at most 5000", sp.PredictPerSec)
	}
}

func TestModelSize(t *testing.T) {
	payload := bytes.Repeat([]byte("x"), 12345)
	n, err := ModelSize(func(w io.Writer) error { _, err := w.Write(payload); return err })
	if err != nil || n != 12345 {
		t.Errorf("ModelSize = %d, %v; want 12345", n, err)
	}
}
