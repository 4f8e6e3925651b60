package lockin

import "slices"

// chain is an addition chain: the steps that compute z^e for every wanted
// exponent e from z by complex multiplications, z^{a+b} = z^a·z^b, reusing
// what is already there (for 1, 2, 3, 5: z², z³ = z²z, z⁵ = z³z²).
type chain struct {
	steps  []chainStep
	maxExp int
}

type chainStep struct{ dst, a, b int }

// newChain returns a chain producing every exponent in targets (each ≥ 1).
func newChain(targets []int) chain {
	t := slices.Clone(targets)
	slices.Sort(t)
	t = slices.Compact(t)
	c := chain{maxExp: 1}
	if len(t) > 0 {
		c.maxExp = max(t[len(t)-1], 1)
	}
	have := make([]bool, c.maxExp+1)
	have[1] = true
	var ensure func(e int)
	ensure = func(e int) {
		if have[e] {
			return
		}
		for a := e - 1; 2*a >= e; a-- {
			if have[a] && have[e-a] {
				c.steps = append(c.steps, chainStep{e, a, e - a})
				have[e] = true
				return
			}
		}
		a := e - 1
		for !have[a] {
			a--
		}
		ensure(e - a)
		c.steps = append(c.steps, chainStep{e, a, e - a})
		have[e] = true
	}
	for _, e := range t {
		ensure(e)
	}
	return c
}

// run fills pw[2e], pw[2e+1] with the real and imaginary parts of z^e for
// every exponent of the chain, given z in pw[2], pw[3]. pw must hold
// 2·(maxExp+1) values.
func (c *chain) run(pw []float64) {
	for _, s := range c.steps {
		ar, ai := pw[2*s.a], pw[2*s.a+1]
		br, bi := pw[2*s.b], pw[2*s.b+1]
		pw[2*s.dst], pw[2*s.dst+1] = ar*br-ai*bi, ar*bi+ai*br
	}
}
