package sweep

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"
)

// Format is the encoding of a sweep file.
type Format string

const (
	JSONL Format = "jsonl" // one JSON object per line; the first line is the header
	CSV   Format = "csv"   // a "# loopwright-sweep/1 {header}" comment line, a column row, one row per point
)

// FormatFor picks the format from a file name's extension (.csv, or .jsonl,
// .ndjson and .json for JSON Lines).
func FormatFor(path string) (Format, error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return CSV, nil
	case ".jsonl", ".ndjson", ".json":
		return JSONL, nil
	}
	return "", fmt.Errorf("cannot tell the format of %q from its extension: name it .csv or .jsonl, or give --format", path)
}

// Encoder writes a sweep file: the header, then records.
type Encoder struct {
	w   *bufio.Writer
	f   Format
	h   *Header
	buf []byte
}

// NewEncoder returns an encoder writing format f to w. Call WriteHeader
// first, unless appending to a file that has one.
func NewEncoder(w io.Writer, f Format, h *Header) *Encoder {
	return &Encoder{w: bufio.NewWriterSize(w, 64<<10), f: f, h: h}
}

// WriteHeader writes the header (and for CSV the column row).
func (e *Encoder) WriteHeader() error {
	b, err := json.Marshal(e.h)
	if err != nil {
		return err
	}
	switch e.f {
	case CSV:
		fmt.Fprintf(e.w, "# %s %s\n", FormatVersion, b)
		cw := csv.NewWriter(e.w)
		cw.Write(csvColumns(e.h))
		cw.Flush()
		if err := cw.Error(); err != nil {
			return err
		}
	default:
		fmt.Fprintf(e.w, "{\"header\":%s}\n", b)
	}
	return e.w.Flush()
}

// WriteRecord writes one record and flushes it to the underlying writer.
func (e *Encoder) WriteRecord(r *Record) error {
	if e.f == CSV {
		e.buf = appendCSV(e.buf[:0], e.h, r)
	} else {
		e.buf = appendJSON(e.buf[:0], e.h, r)
	}
	if _, err := e.w.Write(e.buf); err != nil {
		return err
	}
	return e.w.Flush()
}

// csvColumns is the column row of a CSV sweep file.
func csvColumns(h *Header) []string {
	cols := []string{"i"}
	for _, a := range h.Axes {
		cols = append(cols, a.Label())
	}
	cols = append(cols, "converged", "iterations", "reason")
	for _, o := range h.Outputs {
		cols = append(cols, Axis{Name: o.Name, Unit: o.Unit}.Label())
	}
	for _, o := range h.Outputs {
		for _, in := range h.Inputs {
			cols = append(cols, "K["+o.Name+","+in.Name+"]")
		}
	}
	for _, o := range h.Outputs {
		for _, in := range h.Inputs {
			cols = append(cols, "RGA["+o.Name+","+in.Name+"]")
		}
	}
	cols = append(cols, "det", "cond", "best")
	for _, p := range h.Pairings {
		cols = append(cols, "NI "+p.Label)
	}
	for _, p := range h.Pairings {
		cols = append(cols, "pass "+p.Label)
	}
	return append(cols, "outside")
}

func fmtFloat(b []byte, v float64) []byte { return strconv.AppendFloat(b, v, 'g', -1, 64) }

func appendCSV(b []byte, h *Header, r *Record) []byte {
	no, ni, np := len(h.Outputs), len(h.Inputs), len(h.Pairings)
	num := func(b []byte, v float64) []byte {
		b = append(b, ',')
		if math.IsNaN(v) {
			return b
		}
		if math.IsInf(v, 1) {
			return append(b, "+Inf"...)
		}
		return fmtFloat(b, v)
	}
	nums := func(b []byte, v []float64, n int) []byte {
		for k := 0; k < n; k++ {
			if v == nil {
				b = append(b, ',')
			} else {
				b = num(b, v[k])
			}
		}
		return b
	}
	b = strconv.AppendInt(b, int64(r.Index), 10)
	b = nums(b, r.Values, len(h.Axes))
	b = append(b, ',')
	b = strconv.AppendBool(b, r.Converged)
	b = append(b, ',')
	b = strconv.AppendInt(b, int64(r.Iterations), 10)
	b = append(b, ',')
	b = appendCSVField(b, r.Reason)
	b = nums(b, r.Outputs, no)
	b = nums(b, r.K, no*ni)
	b = nums(b, r.RGA, no*ni)
	b = num(b, r.Det)
	b = num(b, r.Cond)
	b = append(b, ',')
	b = appendCSVField(b, r.Best)
	b = nums(b, r.NI, np)
	for k := 0; k < np; k++ {
		b = append(b, ',')
		if r.Pass != nil {
			b = strconv.AppendBool(b, r.Pass[k])
		}
	}
	b = append(b, ',')
	b = appendCSVField(b, strings.Join(r.Outside, ";"))
	return append(b, '\n')
}

func appendCSVField(b []byte, s string) []byte {
	if !strings.ContainsAny(s, "\",\n\r") {
		return append(b, s...)
	}
	b = append(b, '"')
	b = append(b, strings.ReplaceAll(s, `"`, `""`)...)
	return append(b, '"')
}

func appendJSONString(b []byte, s string) []byte {
	q, _ := json.Marshal(s) // a string always marshals
	return append(b, q...)
}

func appendJSONNum(b []byte, v float64) []byte {
	switch {
	case math.IsNaN(v):
		return append(b, "null"...)
	case math.IsInf(v, 1):
		return append(b, `"+Inf"`...)
	case math.IsInf(v, -1):
		return append(b, `"-Inf"`...)
	}
	return fmtFloat(b, v)
}

func appendJSON(b []byte, h *Header, r *Record) []byte {
	no, ni := len(h.Outputs), len(h.Inputs)
	b = append(b, `{"i":`...)
	b = strconv.AppendInt(b, int64(r.Index), 10)
	b = append(b, `,"at":{`...)
	for a, ax := range h.Axes {
		if a > 0 {
			b = append(b, ',')
		}
		b = appendJSONString(b, ax.Name)
		b = append(b, ':')
		b = appendJSONNum(b, r.Values[a])
	}
	b = append(b, `},"converged":`...)
	b = strconv.AppendBool(b, r.Converged)
	b = append(b, `,"iterations":`...)
	b = strconv.AppendInt(b, int64(r.Iterations), 10)
	if r.Reason != "" {
		b = append(b, `,"reason":`...)
		b = appendJSONString(b, r.Reason)
	}
	if r.Outputs != nil {
		b = append(b, `,"outputs":{`...)
		for i, o := range h.Outputs {
			if i > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, o.Name)
			b = append(b, ':')
			b = appendJSONNum(b, r.Outputs[i])
		}
		b = append(b, '}')
	}
	matrix := func(b []byte, key string, m []float64) []byte {
		if m == nil {
			return b
		}
		b = append(b, `,"`+key+`":[`...)
		for i := 0; i < no; i++ {
			if i > 0 {
				b = append(b, ',')
			}
			b = append(b, '[')
			for j := 0; j < ni; j++ {
				if j > 0 {
					b = append(b, ',')
				}
				b = appendJSONNum(b, m[i*ni+j])
			}
			b = append(b, ']')
		}
		return append(b, ']')
	}
	b = matrix(b, "K", r.K)
	b = matrix(b, "rga", r.RGA)
	if r.Converged {
		b = append(b, `,"det":`...)
		b = appendJSONNum(b, r.Det)
		b = append(b, `,"cond":`...)
		b = appendJSONNum(b, r.Cond)
		b = append(b, `,"best":`...)
		b = appendJSONString(b, r.Best)
	}
	if r.NI != nil {
		b = append(b, `,"ni":{`...)
		for k, p := range h.Pairings {
			if k > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, p.Label)
			b = append(b, ':')
			b = appendJSONNum(b, r.NI[k])
		}
		b = append(b, '}')
	}
	if r.Pass != nil {
		b = append(b, `,"pass":{`...)
		for k, p := range h.Pairings {
			if k > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, p.Label)
			b = append(b, ':')
			b = strconv.AppendBool(b, r.Pass[k])
		}
		b = append(b, '}')
	}
	if r.Outside != nil {
		b = append(b, `,"outside":[`...)
		for k, name := range r.Outside {
			if k > 0 {
				b = append(b, ',')
			}
			b = appendJSONString(b, name)
		}
		b = append(b, ']')
	}
	return append(b, "}\n"...)
}

// File is a sweep file as read back.
type File struct {
	Header  Header
	Format  Format
	Records []Record // in file order
	// Complete is the byte length of the file up to the end of its last
	// complete line: a run stopped mid-write leaves a partial last line,
	// which resuming cuts off.
	Complete int64
}

// ReadError is a problem in a sweep file, at a line.
type ReadError struct {
	Name string
	Line int
	Err  error
}

func (e *ReadError) Error() string {
	return fmt.Sprintf("%s:%d: %v", e.Name, e.Line, e.Err)
}
func (e *ReadError) Unwrap() error { return e.Err }

// ErrNotSweep says a file is not a sweep file of this version.
var ErrNotSweep = errors.New("not a loopwright sweep file (no header line)")

// Read reads a sweep file (either format, told by its first line). name is
// used in messages. A partial last line (no newline) is ignored and not
// counted in Complete.
func Read(name string, r io.Reader) (*File, error) {
	br := bufio.NewReaderSize(r, 64<<10)
	f := &File{}
	var cols []string
	line := 0
	for {
		text, err := br.ReadBytes('\n')
		if len(text) > 0 && text[len(text)-1] != '\n' {
			break // partial line: the run stopped while writing it
		}
		if len(text) > 0 {
			line++
			if err := f.parseLine(name, line, text, &cols); err != nil {
				return nil, err
			}
			f.Complete += int64(len(text))
		}
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	if f.Format == "" {
		return nil, &ReadError{Name: name, Line: 1, Err: ErrNotSweep}
	}
	return f, nil
}

func (f *File) parseLine(name string, line int, text []byte, cols *[]string) error {
	fail := func(format string, a ...any) error {
		return &ReadError{Name: name, Line: line, Err: fmt.Errorf(format, a...)}
	}
	text = bytes.TrimRight(text, "\r\n")
	if line == 1 {
		switch {
		case bytes.HasPrefix(text, []byte("# ")):
			rest, ok := bytes.CutPrefix(text[2:], []byte(FormatVersion+" "))
			if !ok {
				return &ReadError{Name: name, Line: 1, Err: ErrNotSweep}
			}
			f.Format = CSV
			if err := json.Unmarshal(rest, &f.Header); err != nil {
				return fail("bad header: %v", err)
			}
		case bytes.HasPrefix(text, []byte(`{"header":`)):
			f.Format = JSONL
			var w struct{ Header json.RawMessage }
			if err := json.Unmarshal(text, &w); err != nil {
				return fail("bad header: %v", err)
			}
			if err := json.Unmarshal(w.Header, &f.Header); err != nil {
				return fail("bad header: %v", err)
			}
		default:
			return &ReadError{Name: name, Line: 1, Err: ErrNotSweep}
		}
		if f.Header.Format != FormatVersion {
			return fail("format %q, this program reads %q", f.Header.Format, FormatVersion)
		}
		return nil
	}
	var (
		r   Record
		err error
	)
	if f.Format == CSV {
		if line == 2 {
			*cols = csvColumns(&f.Header)
			got, err := csv.NewReader(bytes.NewReader(text)).Read()
			if err != nil || strings.Join(got, ",") != strings.Join(*cols, ",") {
				return fail("the column row does not match the header")
			}
			return nil
		}
		r, err = parseCSV(&f.Header, text)
	} else {
		r, err = parseJSON(&f.Header, text)
	}
	if err == nil {
		err = r.check(&f.Header)
	}
	if err != nil {
		return fail("%v", err)
	}
	f.Records = append(f.Records, r)
	return nil
}

func parseNum(s string) (float64, error) {
	if s == "" {
		return math.NaN(), nil
	}
	return strconv.ParseFloat(s, 64)
}

func parseCSV(h *Header, text []byte) (Record, error) {
	r := Record{Det: math.NaN(), Cond: math.NaN()}
	f, err := csv.NewReader(bytes.NewReader(text)).Read()
	if err != nil {
		return r, err
	}
	no, ni, np, na := len(h.Outputs), len(h.Inputs), len(h.Pairings), len(h.Axes)
	want := 1 + na + 3 + no + 2*no*ni + 3 + 2*np + 1
	if len(f) != want {
		return r, fmt.Errorf("%d fields, want %d", len(f), want)
	}
	k := 0
	next := func() string { k++; return f[k-1] }
	var perr error
	nums := func(n int) []float64 {
		v := make([]float64, n)
		for i := range v {
			x, err := parseNum(next())
			if err != nil && perr == nil {
				perr = err
			}
			v[i] = x
		}
		return nilIfAllNaN(v)
	}
	if r.Index, err = strconv.Atoi(next()); err != nil {
		return r, err
	}
	r.Values = nums(na)
	if r.Values == nil {
		r.Values = make([]float64, na)
		perr = fmt.Errorf("missing axis values")
	}
	if r.Converged, err = strconv.ParseBool(next()); err != nil {
		return r, err
	}
	if r.Iterations, err = strconv.Atoi(next()); err != nil {
		return r, err
	}
	r.Reason = next()
	r.Outputs = nums(no)
	r.K = nums(no * ni)
	r.RGA = nums(no * ni)
	d := nums(2)
	if d != nil {
		r.Det, r.Cond = d[0], d[1]
	}
	r.Best = next()
	r.NI = nums(np)
	for i := 0; i < np; i++ {
		s := next()
		if s == "" {
			continue
		}
		if r.Pass == nil {
			r.Pass = make([]bool, np)
		}
		if r.Pass[i], err = strconv.ParseBool(s); err != nil {
			return r, err
		}
	}
	if s := next(); s != "" {
		r.Outside = strings.Split(s, ";")
	}
	return r, perr
}

// jnum is a JSON number that may be null (NaN) or "+Inf"/"-Inf".
type jnum float64

func (n *jnum) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case "null":
		*n = jnum(math.NaN())
	case `"+Inf"`:
		*n = jnum(math.Inf(1))
	case `"-Inf"`:
		*n = jnum(math.Inf(-1))
	default:
		v, err := strconv.ParseFloat(string(b), 64)
		if err != nil {
			return fmt.Errorf("bad number %s", b)
		}
		*n = jnum(v)
	}
	return nil
}

func parseJSON(h *Header, text []byte) (Record, error) {
	var w struct {
		I          *int
		At         map[string]jnum
		Converged  bool
		Iterations int
		Reason     string
		Outputs    map[string]jnum
		K          [][]jnum
		RGA        [][]jnum `json:"rga"`
		Det, Cond  *jnum
		Best       string
		NI         map[string]jnum `json:"ni"`
		Pass       map[string]bool
		Outside    []string
	}
	r := Record{Det: math.NaN(), Cond: math.NaN()}
	dec := json.NewDecoder(bytes.NewReader(text))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&w); err != nil {
		return r, err
	}
	if w.I == nil {
		return r, fmt.Errorf("no point number \"i\"")
	}
	r.Index, r.Converged, r.Iterations, r.Reason, r.Best = *w.I, w.Converged, w.Iterations, w.Reason, w.Best
	if len(w.Outside) > 0 {
		r.Outside = w.Outside
	}
	named := func(m map[string]jnum, names []string) ([]float64, error) {
		if m == nil {
			return nil, nil
		}
		v := make([]float64, len(names))
		for i, n := range names {
			x, ok := m[n]
			if !ok {
				return nil, fmt.Errorf("no value for %s", n)
			}
			v[i] = float64(x)
		}
		return nilIfAllNaN(v), nil
	}
	var axes, outs, labels []string
	for _, a := range h.Axes {
		axes = append(axes, a.Name)
	}
	for _, o := range h.Outputs {
		outs = append(outs, o.Name)
	}
	for _, p := range h.Pairings {
		labels = append(labels, p.Label)
	}
	var err error
	if r.Values, err = named(w.At, axes); err != nil || r.Values == nil {
		return r, fmt.Errorf("axis values: missing or incomplete")
	}
	if r.Outputs, err = named(w.Outputs, outs); err != nil {
		return r, err
	}
	if r.NI, err = named(w.NI, labels); err != nil {
		return r, err
	}
	flat := func(m [][]jnum) []float64 {
		if m == nil {
			return nil
		}
		var v []float64
		for _, row := range m {
			if len(row) != len(h.Inputs) {
				return make([]float64, 0) // caught by check
			}
			for _, x := range row {
				v = append(v, float64(x))
			}
		}
		return nilIfAllNaN(v)
	}
	r.K, r.RGA = flat(w.K), flat(w.RGA)
	if w.Det != nil {
		r.Det = float64(*w.Det)
	}
	if w.Cond != nil {
		r.Cond = float64(*w.Cond)
	}
	if w.Pass != nil {
		r.Pass = make([]bool, len(labels))
		for i, l := range labels {
			v, ok := w.Pass[l]
			if !ok {
				return r, fmt.Errorf("no pass flag for %s", l)
			}
			r.Pass[i] = v
		}
	}
	return r, nil
}
