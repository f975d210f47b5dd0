package v1layer

// Portable inner loops: what a plain build runs (and a SIMD build on a CPU
// without AVX2+FMA). Go does not vectorise, so these are scalar loops over
// a whole row per group of taps. Each output adds its taps in groups of
// four from the first tap, (((c0·s0 + c1·s1) + c2·s2) + c3·s3), the groups
// and then the last taps one by one into the running sum, in tap and term
// order. Two groups, or a group and the last taps, share one pass over
// the row, so the running sum is loaded and stored once for up to eight
// taps; the additions are the same, in the same order, as one pass per
// group.

// hsumGo is the portable horizontal pass:
//
//	dst[x] = Σ_t Σ_u taps[t][u]·srcs[t][off+x+u],  x ∈ [0,n)
func hsumGo(dst []float32, n int, srcs [][]float32, taps []filt, off int) {
	d := dst[:n]
	clear(d)
	for t, f := range taps {
		tp := f.w
		src := srcs[t][off : off+n+len(tp)-1]
		u := 0
		for ; u+8 <= len(tp); u += 8 {
			c0, c1, c2, c3 := tp[u], tp[u+1], tp[u+2], tp[u+3]
			c4, c5, c6, c7 := tp[u+4], tp[u+5], tp[u+6], tp[u+7]
			s0, s1, s2, s3 := src[u:][:len(d)], src[u+1:][:len(d)], src[u+2:][:len(d)], src[u+3:][:len(d)]
			s4, s5, s6, s7 := src[u+4:][:len(d)], src[u+5:][:len(d)], src[u+6:][:len(d)], src[u+7:][:len(d)]
			for x := range d {
				d[x] = (d[x] + (c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x])) + (c4*s4[x] + c5*s5[x] + c6*s6[x] + c7*s7[x])
			}
		}
		if u+4 <= len(tp) {
			c0, c1, c2, c3 := tp[u], tp[u+1], tp[u+2], tp[u+3]
			s0, s1, s2, s3 := src[u:][:len(d)], src[u+1:][:len(d)], src[u+2:][:len(d)], src[u+3:][:len(d)]
			for x := range d {
				d[x] += c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x]
			}
			u += 4
		}
		switch s := src[u:]; len(tp) - u {
		case 1:
			c0 := tp[u]
			s = s[:len(d)]
			for x := range d {
				d[x] += c0 * s[x]
			}
		case 2:
			c0, c1 := tp[u], tp[u+1]
			s0, s1 := s[:len(d)], s[1:][:len(d)]
			for x := range d {
				d[x] = (d[x] + c0*s0[x]) + c1*s1[x]
			}
		case 3:
			c0, c1, c2 := tp[u], tp[u+1], tp[u+2]
			s0, s1, s2 := s[:len(d)], s[1:][:len(d)], s[2:][:len(d)]
			for x := range d {
				d[x] = ((d[x] + c0*s0[x]) + c1*s1[x]) + c2*s2[x]
			}
		}
	}
}

// vsumGo is the portable vertical pass:
//
//	dst[x] = Σ_t Σ_k taps[t][k]·srcs[t][off+k·stride+x],  x ∈ [0,n)
func vsumGo(dst []float32, n int, srcs [][]float32, taps []filt, off, stride int) {
	d := dst[:n]
	clear(d)
	for t, f := range taps {
		tp := f.w
		src := srcs[t]
		row := func(k int) []float32 { return src[off+k*stride:][:len(d)] }
		k := 0
		for ; k+8 <= len(tp); k += 8 {
			c0, c1, c2, c3 := tp[k], tp[k+1], tp[k+2], tp[k+3]
			c4, c5, c6, c7 := tp[k+4], tp[k+5], tp[k+6], tp[k+7]
			s0, s1, s2, s3 := row(k), row(k+1), row(k+2), row(k+3)
			s4, s5, s6, s7 := row(k+4), row(k+5), row(k+6), row(k+7)
			for x := range d {
				d[x] = (d[x] + (c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x])) + (c4*s4[x] + c5*s5[x] + c6*s6[x] + c7*s7[x])
			}
		}
		if k+4 <= len(tp) {
			c0, c1, c2, c3 := tp[k], tp[k+1], tp[k+2], tp[k+3]
			s0, s1, s2, s3 := row(k), row(k+1), row(k+2), row(k+3)
			for x := range d {
				d[x] += c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x]
			}
			k += 4
		}
		switch len(tp) - k {
		case 1:
			c0, s0 := tp[k], row(k)
			for x := range d {
				d[x] += c0 * s0[x]
			}
		case 2:
			c0, c1, s0, s1 := tp[k], tp[k+1], row(k), row(k+1)
			for x := range d {
				d[x] = (d[x] + c0*s0[x]) + c1*s1[x]
			}
		case 3:
			c0, c1, c2 := tp[k], tp[k+1], tp[k+2]
			s0, s1, s2 := row(k), row(k+1), row(k+2)
			for x := range d {
				d[x] = ((d[x] + c0*s0[x]) + c1*s1[x]) + c2*s2[x]
			}
		}
	}
}
