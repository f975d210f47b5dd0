package v1layer

import "fmt"

// Maps is a stack of C feature maps, each H rows by W columns, stored
// channel-major in one flat slice:
//
//	value of channel c at row y, column x = Pix[(c*H+y)*W+x]
//
// It plays the role image.Gray plays for one grey image. The zero value is
// empty; a zero Maps used as a destination sizes itself (see Resize).
type Maps struct {
	C, H, W int
	Pix     []float32
}

// Resize sets the shape to c×h×w, reusing Pix's backing array when it is
// large enough. Values are not cleared.
func (m *Maps) Resize(c, h, w int) {
	n := c * h * w
	if cap(m.Pix) < n {
		m.Pix = make([]float32, n)
	}
	m.C, m.H, m.W, m.Pix = c, h, w, m.Pix[:n]
}

// Channel returns the H×W plane of channel c, sharing memory with m.
// It panics if c is out of range.
func (m *Maps) Channel(c int) []float32 {
	if c < 0 || c >= m.C {
		panic(fmt.Sprintf("v1layer: channel %d out of range [0,%d)", c, m.C))
	}
	n := m.H * m.W
	return m.Pix[c*n : (c+1)*n]
}

// Len returns C*H*W.
func (m *Maps) Len() int { return m.C * m.H * m.W }
