package learn

// Progress receives reports from long-running fits: done of total steps and a
// short message (for dictionary learning, the running objective). A nil
// Progress is silent. Implementations must be cheap; the library calls Step
// from the goroutine that runs the fit, at most once per step.
type Progress interface {
	Step(done, total int, msg string)
}
