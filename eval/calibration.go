package eval

// Bin is one confidence bin of a reliability diagram.
type Bin struct {
	Lo         float64 `json:"lo"`         // confidence range (Lo, Hi]; the first bin also holds 0
	Hi         float64 `json:"hi"`         //
	Count      int     `json:"count"`      // samples whose top-class probability falls in the bin
	Confidence float64 `json:"confidence"` // mean top-class probability of those samples (0 if empty)
	Accuracy   float64 `json:"accuracy"`   // fraction of them classified correctly (0 if empty)
}

// Calibration returns the expected calibration error over bins equal-width
// confidence bins, and the bins themselves (Guo, Pleiss, Sun & Weinberger
// 2017, "On calibration of modern neural networks", eq. 3):
//
//	ECE = Σₘ |Bₘ|/n · |acc(Bₘ) − conf(Bₘ)|
//
// where a sample's confidence is its largest class probability, its
// prediction the Argmax, and Bₘ holds the samples with confidence in
// ((m−1)/M, m/M]. It panics if bins < 1 or the lengths differ; Score
// validates its inputs before calling it.
func Calibration(labels []int, probs [][]float32, bins int) (float64, []Bin) {
	if bins < 1 || len(labels) != len(probs) {
		panic("eval: Calibration needs bins ≥ 1 and one label per probability vector")
	}
	out := make([]Bin, bins)
	for m := range out {
		out[m].Lo, out[m].Hi = float64(m)/float64(bins), float64(m+1)/float64(bins)
	}
	sumConf := make([]float64, bins)
	sumHit := make([]float64, bins)
	for i, p := range probs {
		c := Argmax(p)
		conf := float64(p[c])
		// Bin m holds ((m)/M, (m+1)/M]: m = ceil(conf·M) − 1.
		m := 0
		for m < bins-1 && conf > out[m].Hi {
			m++
		}
		out[m].Count++
		sumConf[m] += conf
		if c == labels[i] {
			sumHit[m]++
		}
	}
	var ece float64
	n := float64(len(labels))
	for m := range out {
		if out[m].Count == 0 {
			continue
		}
		cnt := float64(out[m].Count)
		out[m].Confidence = sumConf[m] / cnt
		out[m].Accuracy = sumHit[m] / cnt
		d := out[m].Accuracy - out[m].Confidence
		if d < 0 {
			d = -d
		}
		ece += cnt / n * d
	}
	return ece, out
}
