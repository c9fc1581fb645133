package render

import (
	"bytes"
	"math"
	"testing"
)

func TestNum(t *testing.T) {
	tests := []struct {
		v    float64
		sig  int
		want string
	}{
		{0.99000012, 6, "0.99"},
		{0.0100004, 6, "0.0100004"},
		{35.06883, 4, "35.07"},
		{5000, 6, "5000"},
		{-0.861729, 4, "-0.8617"},
		{1.2e-9, 3, "1.2e-09"},
		{123456789012, 4, "1.235e+11"},
		{math.NaN(), 4, "-"},
		{0, 4, "0"},
	}
	for _, tt := range tests {
		if got := Num(tt.v, tt.sig); got != tt.want {
			t.Errorf("Num(%v, %d) = %q, want %q", tt.v, tt.sig, got, tt.want)
		}
	}
}

func TestTableWrite(t *testing.T) {
	tab := &TableData{
		Headers: []string{"name", Header("value", "kg/h")},
		Align:   []Align{Left, Right},
		Rows:    [][]string{{"f_out", "5000"}, {"s", "0.104"}},
	}
	var b bytes.Buffer
	if err := tab.Write(&b); err != nil {
		t.Fatal(err)
	}
	want := "name   value [kg/h]\n-----  ------------\nf_out          5000\ns             0.104\n"
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
}

func TestFloatJSON(t *testing.T) {
	var b bytes.Buffer
	if err := WriteJSON(&b, []Float{1.5, Float(math.NaN())}); err != nil {
		t.Fatal(err)
	}
	if got, want := b.String(), "[\n  1.5,\n  null\n]\n"; got != want {
		t.Errorf("got %q want %q", got, want)
	}
}

func TestOrderedJSON(t *testing.T) {
	var o Ordered[Float]
	o.Set("x[2]", 2)
	o.Set("x[10]", 10)
	o.Set("x[2]", 3)
	var b bytes.Buffer
	if err := WriteJSON(&b, o); err != nil {
		t.Fatal(err)
	}
	if got, want := b.String(), "{\n  \"x[2]\": 3,\n  \"x[10]\": 10\n}\n"; got != want {
		t.Errorf("got %q want %q", got, want)
	}
}
