package eval_test

import (
	"fmt"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
)

// Scoring a belt scanner: two frames with their ground truth and what the
// scanner reported (a sandal found, a trouser called a sandal, a scrap of
// lint reported on an empty belt).
func ExampleScoreScenes() {
	const sandal, trouser = 0, 1
	frames := []eval.FrameResult{
		{Truth: []datasets.SceneItem{{Box: [4]int{10, 10, 40, 30}, Class: sandal}, {Box: [4]int{60, 5, 80, 50}, Class: trouser}},
			Found: []eval.Detection{{Box: [4]float64{11, 10, 40, 31}, Class: sandal, Score: 0.9},
				{Box: [4]float64{60, 6, 79, 50}, Class: sandal, Score: 0.6}}},
		{Found: []eval.Detection{{Box: [4]float64{3, 3, 9, 9}, Class: trouser, Score: 0.2}}},
	}
	s, err := eval.ScoreScenes(frames, 2)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("precision %.2f recall %.2f mAP %.2f\n", s.Precision, s.Recall, s.MAP)
	fmt.Printf("count accuracy %.2f, recognition of found items %.2f, false items per empty belt %.1f\n",
		s.CountAccuracy, s.RecognitionAccuracy, s.FalsePerEmpty)
	// Output:
	// precision 0.33 recall 0.50 mAP 0.50
	// count accuracy 0.50, recognition of found items 0.50, false items per empty belt 1.0
}
