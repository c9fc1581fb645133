package render

import "gonum.org/v1/gonum/mat"

// Matrix lays out m as a table with row and column names (units, when
// given, go in the headers), numbers to sig significant digits.
func Matrix(title, corner string, rows, cols []string, m mat.Matrix, sig int) *TableData {
	r, c := m.Dims()
	t := &TableData{Title: title, Headers: append([]string{corner}, cols...)}
	t.Align = make([]Align, c+1)
	for j := 1; j <= c; j++ {
		t.Align[j] = Right
	}
	for i := 0; i < r; i++ {
		row := make([]string, c+1)
		row[0] = rows[i]
		for j := 0; j < c; j++ {
			row[j+1] = Num(m.At(i, j), sig)
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// Rows returns m as nested slices for JSON, NaN and Inf as null.
func Rows(m *mat.Dense) [][]Float {
	if m == nil {
		return nil
	}
	r, c := m.Dims()
	out := make([][]Float, r)
	for i := range out {
		out[i] = make([]Float, c)
		for j := range out[i] {
			out[i][j] = Float(m.At(i, j))
		}
	}
	return out
}
