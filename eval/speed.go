package eval

import (
	"fmt"
	"io"
	"runtime"
	"runtime/metrics"
	"slices"
	"sync"
	"time"
)

// BatchFunc runs some per-image work (typically feature extraction) on a
// batch of h×w images with the given number of workers.
type BatchFunc func(imgs [][]float32, h, w, workers int) error

// SpeedConfig sets up MeasureSpeed. The zero value means the defaults
// beside each field.
type SpeedConfig struct {
	Workers        int // workers for the throughput runs; 0 means runtime.GOMAXPROCS(0)
	Batch          int // images per call in the throughput runs; 0 means 256
	Repeats        int // throughput runs, the median is reported; 0 means 3
	LatencySamples int // single-image calls timed for the latency quantiles; 0 means 200
}

// Speed holds throughput, latency and memory figures. Throughputs are
// images per second of wall time over the whole image set (median of
// Repeats runs after one warm-up batch); latencies are single-image
// PredictBatch calls with one worker.
type Speed struct {
	Images        int     `json:"images"`
	Workers       int     `json:"workers"`
	GOMAXPROCS    int     `json:"gomaxprocs"`
	ExtractPerSec float64 `json:"extract_images_per_s"` // 0 when no extractor was given
	PredictPerSec float64 `json:"predict_images_per_s"`
	LatencyP50    float64 `json:"latency_p50_ms"` // milliseconds per image
	LatencyP99    float64 `json:"latency_p99_ms"`
	HeapBase      uint64  `json:"heap_base_bytes"` // live heap objects before the runs
	HeapPeak      uint64  `json:"heap_peak_bytes"` // largest sampled heap during the runs
	ModelBytes    int64   `json:"model_bytes"`     // serialized model size, if known
}

// MeasureSpeed times p.PredictBatch (and extract, when not nil) over imgs.
// Peak heap is the largest value of runtime/metrics
// "/memory/classes/heap/objects:bytes" sampled every millisecond while the
// runs go on, so it catches transient buffers a before/after reading would
// miss (it may still miss spikes shorter than a millisecond).
func MeasureSpeed(p Predictor, extract BatchFunc, imgs [][]float32, h, w int, cfg SpeedConfig) (*Speed, error) {
	if len(imgs) == 0 {
		return nil, fmt.Errorf("eval: speed measurement with no images")
	}
	if cfg.Workers == 0 {
		cfg.Workers = runtime.GOMAXPROCS(0)
	}
	if cfg.Batch == 0 {
		cfg.Batch = 256
	}
	if cfg.Repeats == 0 {
		cfg.Repeats = 3
	}
	if cfg.LatencySamples == 0 {
		cfg.LatencySamples = 200
	}
	if cfg.Workers < 1 || cfg.Batch < 1 || cfg.Repeats < 1 || cfg.LatencySamples < 1 {
		return nil, fmt.Errorf("eval: speed config %+v; want positive workers, batch, repeats and latency samples", cfg)
	}
	sp := &Speed{Images: len(imgs), Workers: cfg.Workers, GOMAXPROCS: runtime.GOMAXPROCS(0)}
	runtime.GC()
	sp.HeapBase = heapObjects()
	stop := startHeapSampler(&sp.HeapPeak)

	predict := func(b [][]float32) error { _, err := p.PredictBatch(b, h, w, cfg.Workers); return err }
	var err error
	if extract != nil {
		ex := func(b [][]float32) error { return extract(b, h, w, cfg.Workers) }
		if sp.ExtractPerSec, err = throughput(ex, imgs, cfg); err != nil {
			stop()
			return nil, fmt.Errorf("eval: speed of extraction: %w", err)
		}
	}
	if sp.PredictPerSec, err = throughput(predict, imgs, cfg); err != nil {
		stop()
		return nil, fmt.Errorf("eval: speed of prediction: %w", err)
	}
	lat := make([]float64, 0, cfg.LatencySamples)
	for i := range cfg.LatencySamples {
		one := imgs[i%len(imgs) : i%len(imgs)+1]
		t0 := time.Now()
		if _, err := p.PredictBatch(one, h, w, 1); err != nil {
			stop()
			return nil, fmt.Errorf("eval: latency: %w", err)
		}
		lat = append(lat, float64(time.Since(t0))/1e6)
	}
	stop()
	slices.Sort(lat)
	sp.LatencyP50 = quantileSorted(lat, 0.50)
	sp.LatencyP99 = quantileSorted(lat, 0.99)
	return sp, nil
}

func throughput(run func([][]float32) error, imgs [][]float32, cfg SpeedConfig) (float64, error) {
	if err := run(imgs[:min(cfg.Batch, len(imgs))]); err != nil { // warm-up
		return 0, err
	}
	rates := make([]float64, cfg.Repeats)
	for r := range rates {
		t0 := time.Now()
		for lo := 0; lo < len(imgs); lo += cfg.Batch {
			if err := run(imgs[lo:min(lo+cfg.Batch, len(imgs))]); err != nil {
				return 0, err
			}
		}
		rates[r] = float64(len(imgs)) / time.Since(t0).Seconds()
	}
	slices.Sort(rates)
	return quantileSorted(rates, 0.5), nil
}

const heapMetric = "/memory/classes/heap/objects:bytes"

func heapObjects() uint64 {
	s := []metrics.Sample{{Name: heapMetric}}
	metrics.Read(s)
	if s[0].Value.Kind() != metrics.KindUint64 {
		return 0
	}
	return s[0].Value.Uint64()
}

// startHeapSampler records the largest heap reading into *peak until the
// returned stop function is called.
func startHeapSampler(peak *uint64) (stop func()) {
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		t := time.NewTicker(time.Millisecond)
		defer t.Stop()
		for {
			if v := heapObjects(); v > *peak {
				*peak = v
			}
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	return func() {
		close(done)
		wg.Wait()
		if v := heapObjects(); v > *peak {
			*peak = v
		}
	}
}

// ModelSize returns the number of bytes save writes, without keeping them.
func ModelSize(save func(io.Writer) error) (int64, error) {
	var c countWriter
	if err := save(&c); err != nil {
		return 0, fmt.Errorf("eval: measuring model size: %w", err)
	}
	return c.n, nil
}

type countWriter struct{ n int64 }

func (c *countWriter) Write(p []byte) (int, error) { c.n += int64(len(p)); return len(p), nil }
