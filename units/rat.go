package units

import (
	"math"
	"math/bits"
	"strconv"
)

// Rat is a small rational exponent, always normalised by the functions of
// this package (Den > 0, gcd(|Num|, Den) = 1). The zero value is 0: a Den of 0
// is read as 1, so Rat{} is 0/1 and Rat{Num: 2} is 2.
//
// Arithmetic on Rat is exact. It is meant for the small exponents of physical
// dimensions; an operation whose result does not fit an int panics (the
// parser bounds every exponent long before that).
type Rat struct{ Num, Den int }

// R returns the normalised rational num/den. It panics if den is 0.
func R(num, den int) Rat {
	if den == 0 {
		panic("units: R with zero denominator")
	}
	return normRat(num, den)
}

func normRat(n, d int) Rat {
	if d < 0 {
		n, d = neg(n), neg(d)
	}
	if n == 0 {
		return Rat{0, 1}
	}
	g := gcd(absInt(n), d)
	return Rat{n / g, d / g}
}

// canon returns r with the zero-value convention resolved and normalised.
func (r Rat) canon() Rat {
	if r.Den == 0 {
		return Rat{r.Num, 1}
	}
	if r.Den == 1 {
		return r
	}
	return normRat(r.Num, r.Den)
}

// Add returns r+s.
func (r Rat) Add(s Rat) Rat {
	r, s = r.canon(), s.canon()
	if r.Den == s.Den {
		return normRat(addChk(r.Num, s.Num), r.Den)
	}
	return normRat(addChk(mulChk(r.Num, s.Den), mulChk(s.Num, r.Den)), mulChk(r.Den, s.Den))
}

// Sub returns r-s.
func (r Rat) Sub(s Rat) Rat { return r.Add(s.Neg()) }

// Neg returns -r.
func (r Rat) Neg() Rat { r = r.canon(); return Rat{neg(r.Num), r.Den} }

// Mul returns r*s.
func (r Rat) Mul(s Rat) Rat {
	r, s = r.canon(), s.canon()
	// Cross-reduce first to keep the numbers small.
	g1 := gcd(absInt(r.Num), s.Den)
	g2 := gcd(absInt(s.Num), r.Den)
	if g1 == 0 || g2 == 0 { // a zero numerator
		return Rat{0, 1}
	}
	return normRat(mulChk(r.Num/g1, s.Num/g2), mulChk(r.Den/g2, s.Den/g1))
}

// IsZero reports whether r is 0.
func (r Rat) IsZero() bool { return r.Num == 0 }

// IsInt reports whether r is a whole number.
func (r Rat) IsInt() bool { return r.canon().Den == 1 }

// Float64 returns r as a float64.
func (r Rat) Float64() float64 {
	r = r.canon()
	return float64(r.Num) / float64(r.Den)
}

// String returns r as "2", "-1" or "1/2".
func (r Rat) String() string {
	r = r.canon()
	if r.Den == 1 {
		return strconv.Itoa(r.Num)
	}
	return strconv.Itoa(r.Num) + "/" + strconv.Itoa(r.Den)
}

// decimal returns r as a terminating decimal ("0.5", "-1.25") when its
// denominator has no prime factors other than 2 and 5, and ok=false otherwise.
func (r Rat) decimal() (string, bool) {
	r = r.canon()
	d := r.Den
	for d%2 == 0 {
		d /= 2
	}
	for d%5 == 0 {
		d /= 5
	}
	if d != 1 {
		return "", false
	}
	return strconv.FormatFloat(r.Float64(), 'f', -1, 64), true
}

func gcd(a, b int) int {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

func absInt(a int) int {
	if a < 0 {
		return neg(a)
	}
	return a
}

func neg(a int) int {
	if a == math.MinInt {
		panic("units: rational exponent overflow")
	}
	return -a
}

func mulChk(a, b int) int {
	hi, lo := bits.Mul64(uint64(absInt(a)), uint64(absInt(b)))
	if hi != 0 || lo > math.MaxInt64 {
		panic("units: rational exponent overflow")
	}
	if (a < 0) != (b < 0) {
		return -int(lo)
	}
	return int(lo)
}

func addChk(a, b int) int {
	c := a + b
	if (a > 0 && b > 0 && c < 0) || (a < 0 && b < 0 && c >= 0) {
		panic("units: rational exponent overflow")
	}
	return c
}
