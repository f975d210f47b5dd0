package v1layer

import (
	"fmt"
)

// Config describes a whole front end. Its zero value is the documented
// default front end — the reference work of internal/benchwork/data/filterbank.json:
// on/off DoG at σ_c = 1 and 2 px, Gabor quadrature pairs at 4 orientations
// and λ = 4, 8 px, quadrature energy, 3×3 stride-2 max pooling, zero border,
// no contrast or divisive normalisation, no end-stopping.
//
// Config round-trips through encoding/json (it is stored in model files).
type Config struct {
	DoG   DoGConfig   `json:"dog"`
	Gabor GaborConfig `json:"gabor"`
	// Bank, when non-nil, is a kernel bank (for example one learned by
	// package learn) used as the simple-cell stage in place of the Gabor
	// bank; Gabor must then have Disable set. Quadrature partners (Meta.Pair)
	// are combined into energy channels like the hand-set pairs.
	Bank    *Bank         `json:"bank,omitempty"`
	Complex ComplexConfig `json:"complex"`
	Pool    PoolConfig    `json:"pool"`
	Border  Border        `json:"border,omitempty"`
}

// Border says how correlation treats pixels outside the image.
type Border string

const (
	// BorderZero (the default, also the empty string) reads 0 outside.
	BorderZero Border = "zero"
	// BorderReflect mirrors the image about its edge including the edge
	// pixel (d c b a | a b c d), as scipy.ndimage's mode "reflect".
	BorderReflect Border = "reflect"
)

func (c Config) withDefaults() Config {
	c.DoG = c.DoG.withDefaults()
	if !c.Gabor.Disable {
		c.Gabor = c.Gabor.withDefaults()
	}
	if c.Complex.Mode == "" {
		c.Complex.Mode = "energy"
	}
	c.Complex.Length = c.Complex.Length.withDefaults()
	c.Complex.EndStop = c.Complex.EndStop.withDefaults()
	c.Complex.Norm = c.Complex.Norm.withDefaults()
	c.Pool = c.Pool.withDefaults()
	if c.Border == "" {
		c.Border = BorderZero
	}
	return c
}

func (c Config) validate() error {
	if !c.DoG.Disable {
		if err := c.DoG.validate(); err != nil {
			return err
		}
	}
	if c.Bank != nil && !c.Gabor.Disable {
		return fmt.Errorf("v1layer: Config has both a Bank and the Gabor stage; set Gabor.Disable to use the bank alone")
	}
	if !c.Gabor.Disable {
		if err := c.Gabor.validate(); err != nil {
			return err
		}
	}
	if c.Bank != nil {
		if err := c.Bank.Validate(); err != nil {
			return err
		}
	}
	if c.DoG.Disable && c.Gabor.Disable && c.Bank == nil {
		return fmt.Errorf("v1layer: Config disables DoG and Gabor and has no Bank; nothing to compute")
	}
	switch c.Complex.Mode {
	case "energy", "rectified", "linear":
	default:
		return fmt.Errorf("v1layer: Complex.Mode %q; want \"energy\" (default), \"rectified\" or \"linear\"", c.Complex.Mode)
	}
	if c.Complex.Mode == "energy" && !c.Gabor.Disable && c.Gabor.Phases == 4 {
		return fmt.Errorf("v1layer: Gabor.Phases 4 with Complex.Mode \"energy\" gives each energy twice; use Phases 2, or Mode \"rectified\" for four-polarity simple cells")
	}
	if err := c.Complex.Length.validate(); err != nil {
		return err
	}
	if err := c.Complex.EndStop.validate(); err != nil {
		return err
	}
	if err := c.Complex.Norm.validate(); err != nil {
		return err
	}
	if err := c.Pool.validate(); err != nil {
		return err
	}
	switch c.Border {
	case BorderZero, BorderReflect:
	default:
		return fmt.Errorf("v1layer: Border %q; want \"zero\" (default) or \"reflect\"", c.Border)
	}
	return nil
}
