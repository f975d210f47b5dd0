package eval_test

import (
	"fmt"

	"github.com/striate/striate/eval"
)

// Scores of a three-class classifier on six test images.
func ExampleScore() {
	classes := []string{"shirt", "trouser", "bag"}
	labels := []int{0, 0, 1, 1, 2, 2}
	probs := [][]float32{
		{0.8, 0.1, 0.1}, {0.4, 0.5, 0.1}, // the second shirt is taken for a trouser
		{0.1, 0.8, 0.1}, {0.2, 0.7, 0.1},
		{0.1, 0.1, 0.8}, {0.3, 0.1, 0.6},
	}
	m, err := eval.Score(labels, probs, classes, eval.MetricsConfig{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("accuracy %.3f, 95%% Wilson interval [%.3f, %.3f]\n", m.Accuracy, m.CI.Lo, m.CI.Hi)
	for _, c := range m.PerClass {
		fmt.Printf("%-7s precision %.2f recall %.2f F1 %.2f\n", c.Class, c.Precision, c.Recall, c.F1)
	}
	fmt.Println("confusion (true × predicted):", m.Confusion)
	// Output:
	// accuracy 0.833, 95% Wilson interval [0.436, 0.970]
	// shirt   precision 1.00 recall 0.50 F1 0.67
	// trouser precision 0.67 recall 1.00 F1 0.80
	// bag     precision 1.00 recall 1.00 F1 1.00
	// confusion (true × predicted): [[1 1 0] [0 2 0] [0 0 2]]
}

// Two classifiers on the same ten images: A alone is right on three, B
// alone on one.
func ExampleCompare() {
	labels := []int{0, 1, 2, 0, 1, 2, 0, 1, 2, 0}
	predA := []int{0, 1, 2, 0, 1, 2, 0, 2, 0, 1}
	predB := []int{0, 1, 2, 1, 2, 0, 0, 1, 0, 1}
	c, err := eval.Compare("hand-set", "learned", labels, predA, predB, eval.CompareConfig{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("accuracy %.1f vs %.1f, only A right %d, only B right %d, exact McNemar p = %.3f\n",
		c.AccuracyA, c.AccuracyB, c.OnlyA, c.OnlyB, c.PValue)
	// Output:
	// accuracy 0.7 vs 0.5, only A right 3, only B right 1, exact McNemar p = 0.625
}
