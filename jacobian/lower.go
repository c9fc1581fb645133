package jacobian

import "math"

// constPool numbers the distinct constants of a program (by bits, so 0 and
// -0 stay apart) in order of first use.
type constPool struct {
	vals []float64
	idx  map[uint64]int32
}

func (c *constPool) add(v float64) int32 {
	bits := math.Float64bits(v)
	if i, ok := c.idx[bits]; ok {
		return i
	}
	if c.idx == nil {
		c.idx = map[uint64]int32{}
	}
	i := int32(len(c.vals))
	c.vals = append(c.vals, v)
	c.idx[bits] = i
	return i
}

// collect adds the constants of t's source form to the pool.
func (c *constPool) collect(t *tape) {
	for _, o := range t.ops {
		switch o.code {
		case opConst, opPowC:
			c.add(o.c)
		}
	}
}

// lower builds the lowered form of t for a value space with nx unknowns, np
// parameters and the constants of pool (every constant of t must be in it),
// temporaries from base = nx+np+len(pool.vals). Each arithmetic op of the
// source form becomes one instruction in the same order; loads become
// operand indices.
func (t *tape) lower(nx, np int, pool *constPool) {
	cbase := int32(nx + np)
	t.base = cbase + int32(len(pool.vals))
	t.slot = make([]int32, len(t.ops))
	t.code = t.code[:0]
	t.leaves = t.leaves[:0]
	for k, o := range t.ops {
		switch o.code {
		case opVar:
			t.slot[k] = o.a
			t.leaves = append(t.leaves, t.slot[k])
			continue
		case opParam:
			t.slot[k] = int32(nx) + o.a
			t.leaves = append(t.leaves, t.slot[k])
			continue
		case opConst:
			t.slot[k] = cbase + pool.idx[math.Float64bits(o.c)]
			t.leaves = append(t.leaves, t.slot[k])
			continue
		}
		in := instr{code: o.code, a: t.slot[o.a]}
		switch {
		case o.code == opPowC:
			in.b = cbase + pool.idx[math.Float64bits(o.c)]
		case o.code.binary():
			in.b = t.slot[o.b]
		default:
			in.b = in.a
		}
		t.slot[k] = t.base + int32(len(t.code))
		t.code = append(t.code, in)
	}
	t.out = t.slot[t.root]
}
