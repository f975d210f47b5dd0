package pipeline

import (
	"fmt"
	"math"
	"sync"
	"time"

	"github.com/striate/striate/datasets"
)

// ScanFitConfig configures FitScanner. Each zero field means its documented
// default.
type ScanFitConfig struct {
	// Scan is the configuration of the scanner whose attention picks the
	// windows (its Threshold plays no part: every fixation's windows are
	// kept). Use the configuration the fitted model will be scanned with.
	Scan ScanConfig `json:"scan"`
	// MatchIoU: a candidate window whose box has an IoU of at least
	// MatchIoU with a ground-truth item is a training image of that item's
	// class (the truth with the largest IoU); windows matching no item are
	// not used. Default 0.5, the PASCAL VOC criterion (Everingham et al.
	// 2010); range (0, 1].
	MatchIoU float64 `json:"match_iou,omitempty"`
	// MaxWindows bounds the windows added to the clean images; when more
	// match, an evenly spaced selection in scene order is kept. Default:
	// as many as the clean training images; range [1, 10,000,000].
	MaxWindows int `json:"max_windows,omitempty"`
}

// DefaultMatchIoU is the default of ScanFitConfig.MatchIoU.
const DefaultMatchIoU = 0.5

// maxScanWindows bounds ScanFitConfig.MaxWindows: 10 million windows of
// 28×28 bytes are 7.8 GB, beyond any machine this is fitted on.
const maxScanWindows = 10_000_000

// ScanFitReport describes a FitScanner run.
type ScanFitReport struct {
	First  FitReport // the fit on the clean images alone
	Second FitReport // the fit on the clean images and the windows
	// Fixations is the number of recognised fixations in the scenes,
	// Windows the candidate windows they gave, Matched those whose box
	// matched a truth item and Added those added to the training images
	// (at most MaxWindows).
	Fixations, Windows, Matched, Added int
	Harvest                            time.Duration // scanning the scenes
}

// FitScanner fits a model for scanning frames: a model trained on clean
// single items only has never seen what attention hands it (windows cut
// around ink groups, with a neighbour's stroke or a scrap of lint kept in,
// items framed a little off or at the wrong scale), so it is fitted again
// on those windows as well.
//
// The rule: (1) Fit(cfg, train) on the clean images; (2) a Scanner with
// sc.Scan on that model scans every scene of scenes, which must hold the
// ground truth (datasets.SceneBuilder or datasets.Clutter scenes built
// from the TRAINING split; never test images), and every candidate window
// of every recognised fixation (all Frames and Sizes windows, at the
// model's input size, as the recogniser receives them, quantised to bytes)
// is labelled with the class of the truth item its box matches at IoU ≥
// MatchIoU, or dropped when it matches none; (3) Fit(cfg, train plus the
// labelled windows) is the model returned. The windows teach the
// recogniser its own attention's errors, the idea of training a detector's
// classifier on the regions its proposal stage hands it (Girshick et al.
// 2014, "Rich feature hierarchies for accurate object detection", CVPR,
// fine-tuning on proposals of IoU ≥ 0.5 with a ground-truth box).
//
// The model's classes are train's; no "no item" class is added, so Predict
// and PredictBatch on clean images behave as any model's do, but the
// windows share the head with the clean images and may cost a little clean
// accuracy (the scene run, TestScanTargets, prints it beside the scene
// figures). The "no item"
// decision stays the threshold: choose it afterwards with
// Scanner.ChooseThreshold on other validation scenes of the training
// split. train's images must be at the model's input size (cfg.Input).
// The same inputs give the same model whatever opts.Workers is.
func FitScanner(cfg Config, train *datasets.Set, scenes []datasets.Scene, sc ScanFitConfig, opts FitOptions) (*Model, ScanFitReport, error) {
	var rep ScanFitReport
	if sc.MatchIoU == 0 {
		sc.MatchIoU = DefaultMatchIoU
	}
	if !(sc.MatchIoU > 0 && sc.MatchIoU <= 1) {
		return nil, rep, fmt.Errorf("pipeline: ScanFitConfig.MatchIoU %v out of range (0,1]; 0 means %v", sc.MatchIoU, DefaultMatchIoU)
	}
	if sc.MaxWindows < 0 || sc.MaxWindows > maxScanWindows {
		return nil, rep, fmt.Errorf("pipeline: ScanFitConfig.MaxWindows %d out of range [1,%d]; 0 means as many as the training images", sc.MaxWindows, maxScanWindows)
	}
	if len(scenes) == 0 {
		return nil, rep, fmt.Errorf("pipeline: FitScanner needs training scenes with ground truth; build them from the training split with datasets.NewSceneBuilder or datasets.Clutter")
	}
	if err := checkSet(train, "training set"); err != nil {
		return nil, rep, err
	}
	for i := range scenes {
		for _, it := range scenes[i].Items {
			if it.Class < 0 || it.Class >= len(train.Classes) {
				return nil, rep, fmt.Errorf("pipeline: FitScanner: scene %d holds class %d; the training set %q has classes 0 … %d; build the scenes from the same dataset", i, it.Class, train.Name, len(train.Classes)-1)
			}
		}
	}
	m, first, err := FitReported(cfg, train, opts)
	rep.First = first
	if err != nil {
		return nil, rep, err
	}
	ih, iw := m.InputSize()
	if train.H != ih || train.W != iw {
		return nil, rep, fmt.Errorf("pipeline: FitScanner: training images are %d×%d, the model's input is %d×%d; set Config.Input to the images' size", train.H, train.W, ih, iw)
	}
	s, err := NewScanner(m, sc.Scan)
	if err != nil {
		return nil, rep, err
	}
	t0 := time.Now()
	wins, labels, err := s.harvest(scenes, sc.MatchIoU, opts.Workers, &rep)
	if err != nil {
		return nil, rep, err
	}
	rep.Harvest = time.Since(t0)
	limit := sc.MaxWindows
	if limit == 0 {
		limit = train.N
	}
	keep := evenly(len(wins), limit)
	rep.Added = len(keep)
	if rep.Added == 0 {
		return nil, rep, fmt.Errorf("pipeline: FitScanner: no window of the %d scenes matched a truth item at IoU ≥ %v; check that the scenes hold items of ScanConfig.ItemSize", len(scenes), sc.MatchIoU)
	}
	n := ih * iw
	all := &datasets.Set{Name: train.Name + "+windows", N: train.N + len(keep), H: ih, W: iw,
		Pix: make([]uint8, 0, (train.N+len(keep))*n), Labels: make([]int, 0, train.N+len(keep)),
		Classes: train.Classes, Source: train.Source}
	all.Pix = append(all.Pix, train.Pix[:train.N*n]...)
	all.Labels = append(all.Labels, train.Labels[:train.N]...)
	for _, k := range keep {
		all.Pix = append(all.Pix, wins[k]...)
		all.Labels = append(all.Labels, labels[k])
	}
	m, rep.Second, err = FitReported(cfg, all, opts)
	if err != nil {
		return nil, rep, err
	}
	return m, rep, nil
}

// evenly returns min(n, k) indices of 0 … n−1, evenly spaced, in order.
func evenly(n, k int) []int {
	k = min(n, k)
	out := make([]int, k)
	for i := range out {
		out[i] = int(int64(i) * int64(n) / int64(k))
	}
	return out
}

// harvest scans the scenes (over workers goroutines, one scene each) and
// returns, in scene and fixation order, the candidate windows (bytes)
// that match a truth item at IoU ≥ matchIoU, with that item's class.
func (s *Scanner) harvest(scenes []datasets.Scene, matchIoU float64, workers int, rep *ScanFitReport) ([][]uint8, []int, error) {
	type got struct {
		wins            [][]uint8
		labels          []int
		fix, all, match int
		err             error
	}
	out := make([]got, len(scenes))
	var next sync.Mutex
	k := 0
	var wg sync.WaitGroup
	for range max(1, workers) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var res ScanResult
			for {
				next.Lock()
				i := k
				k++
				next.Unlock()
				if i >= len(scenes) {
					return
				}
				sc, g := &scenes[i], &out[i]
				_, g.err = s.scan(&res, sc.Pix, sc.H, sc.W, 1, math.Inf(1), func(wins [][]float32, boxes [][4]int, _ [][]float32) {
					g.fix++
					for j, win := range wins {
						g.all++
						c, bv := -1, 0.0
						for _, tr := range sc.Items {
							if v := IoU(boxes[j], tr.Box); v >= matchIoU && v > bv {
								c, bv = tr.Class, v
							}
						}
						if c < 0 {
							continue
						}
						g.match++
						b := make([]uint8, len(win))
						for p, v := range win {
							b[p] = uint8(min(255, max(0, math.Round(float64(v)*255))))
						}
						g.wins, g.labels = append(g.wins, b), append(g.labels, c)
					}
				})
			}
		}()
	}
	wg.Wait()
	var wins [][]uint8
	var labels []int
	for i, g := range out {
		if g.err != nil {
			return nil, nil, fmt.Errorf("pipeline: FitScanner: scene %d: %w", i, g.err)
		}
		rep.Fixations, rep.Windows, rep.Matched = rep.Fixations+g.fix, rep.Windows+g.all, rep.Matched+g.match
		wins, labels = append(wins, g.wins...), append(labels, g.labels...)
	}
	return wins, labels, nil
}
