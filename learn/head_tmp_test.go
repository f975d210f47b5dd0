package learn

import (
	"fmt"
	"math/rand/v2"
	"syscall"
	"testing"

	"github.com/striate/striate/learn/internal/nn"
)

func BenchmarkTmpChunks(b *testing.B) {
	for _, ch := range []int{1, 2, 4, 8} {
		for _, w := range []int{1, 2} {
			b.Run(fmt.Sprintf("c%d-w%d", ch, w), func(b *testing.B) {
				sp := nn.Spec{In: 1085, Hidden: 512, Out: 10, Batch: 128, L2: 1e-4, Chunks: ch}
				team := nn.NewTeam(w)
				defer team.Close()
				e, _ := nn.NewPlain(sp, headKernel(), team)
				rng := rand.New(rand.NewPCG(1, 1))
				var grads [][]float32
				for _, p := range e.Params32() {
					for i := range p {
						p[i] = float32(0.05 * rng.NormFloat64())
					}
					grads = append(grads, make([]float32, len(p)))
				}
				for i := range e.X32() {
					e.X32()[i] = float32(rng.NormFloat64())
				}
				for i := 0; i < sp.Batch; i++ {
					e.Y32()[i*sp.Out+i%sp.Out] = 1
				}
				var ga any = grads
				e.Eval(ga)
				var r0, r1 syscall.Rusage
				syscall.Getrusage(0, &r0)
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					e.Eval(ga)
				}
				syscall.Getrusage(0, &r1)
				cpu := float64(r1.Utime.Nano()-r0.Utime.Nano()+r1.Stime.Nano()-r0.Stime.Nano()) / 1e6
				b.ReportMetric(cpu/float64(b.N), "cpu-ms/op")
			})
		}
	}
}
