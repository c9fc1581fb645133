package units

import (
	"fmt"
	"strconv"
	"unicode"
	"unicode/utf8"
)

// ParseQuantity reads a number and an optional unit: "1800 kg/h",
// "3.2 barg", "85 degC", "-5e-3 1/s", or a bare number such as "0.95", for
// which u is dimensionless and hasUnit is false. v is the number as written,
// in u: convert it with u.ToSI(v) (absolute) or u.DiffToSI(v) (a
// difference). An error is an *Error whose Input is s and whose Col points
// into s.
func ParseQuantity(s string) (v float64, u Unit, hasUnit bool, err error) {
	if n := utf8.RuneCountInString(s); n > MaxInput {
		return 0, Unit{}, false, &Error{Input: clip(s), Col: MaxInput + 1,
			Msg: fmt.Sprintf("too long (%d characters; the limit is %d)", n, MaxInput)}
	}
	rs := []rune(s)
	i := 0
	for i < len(rs) && unicode.IsSpace(rs[i]) {
		i++
	}
	if i == len(rs) {
		return 0, Unit{}, false, &Error{Input: s, Col: i + 1, Msg: `empty quantity; write a number and a unit, as in "1800 kg/h"`}
	}
	start := i
	if rs[i] == '+' || rs[i] == '-' {
		i++
	}
	end := i
	if end < len(rs) && (isDigit(rs[end]) || rs[end] == '.') {
		end = scanNumber(rs, end)
	}
	num := string(rs[start:end])
	if end == i || num == "." || num == "-." || num == "+." {
		return 0, Unit{}, false, &Error{Input: s, Col: start + 1, Msg: `expected a number first, as in "1800 kg/h" or "0.95"`}
	}
	v, perr := strconv.ParseFloat(num, 64)
	if perr != nil {
		return 0, Unit{}, false, &Error{Input: s, Col: start + 1, Msg: fmt.Sprintf("number %s is out of range", num)}
	}
	j := end
	for j < len(rs) && unicode.IsSpace(rs[j]) {
		j++
	}
	if j == len(rs) {
		return v, Unit{Scale: 1}, false, nil
	}
	u, err = parseUnit(s, string(rs[end:]), end)
	if err != nil {
		return 0, Unit{}, false, err
	}
	return v, u, true, nil
}
