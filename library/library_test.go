package library

import (
	"errors"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var embeddedTemplates = []string{"blender", "column", "cstr", "flash", "flash-constk", "heated-tank"}

func TestIsTemplateRef(t *testing.T) {
	tests := []struct {
		arg  string
		name string
		ok   bool
	}{
		{"lib:column", "column", true},
		{"lib:", "", true},
		{"lib:../etc/passwd", "../etc/passwd", true}, // a ref; Open rejects the name
		{"./lib:column", "", false},                  // a file path, documented escape
		{"column.yaml", "", false},
		{"Lib:column", "", false},
	}
	for _, tt := range tests {
		name, ok := IsTemplateRef(tt.arg)
		if name != tt.name || ok != tt.ok {
			t.Errorf("IsTemplateRef(%q) = %q, %v; want %q, %v", tt.arg, name, ok, tt.name, tt.ok)
		}
	}
}

func TestResolveDir(t *testing.T) {
	env := func(v string) func(string) string {
		return func(k string) string {
			if k == EnvDir {
				return v
			}
			return ""
		}
	}
	def, err := DefaultDir()
	if err != nil {
		t.Skipf("no user config dir here: %v", err)
	}
	tests := []struct {
		flag, env, want string
	}{
		{"/a/b/", "/env", "/a/b"},
		{"", "/env/x", "/env/x"},
		{"", "", def},
	}
	for _, tt := range tests {
		got, err := ResolveDir(tt.flag, env(tt.env))
		if err != nil || got != tt.want {
			t.Errorf("ResolveDir(%q, env %q) = %q, %v; want %q", tt.flag, tt.env, got, err, tt.want)
		}
	}
	if !strings.HasSuffix(def, filepath.Join("loopwright", "templates")) {
		t.Errorf("DefaultDir() = %q, want .../loopwright/templates", def)
	}
}

func TestListEmbedded(t *testing.T) {
	entries, err := New("").List()
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name)
		if e.Source != SourceEmbedded || e.Overrides || e.Problem != "" {
			t.Errorf("%s: source %q overrides %v problem %q", e.Name, e.Source, e.Overrides, e.Problem)
		}
		if e.Summary == "" || !strings.HasSuffix(e.Summary, ".") || len(e.Summary) > 140 {
			t.Errorf("%s: summary %q should be one short sentence", e.Name, e.Summary)
		}
		if len(e.Inputs) < 2 || len(e.Outputs) < 2 || e.Size == 0 {
			t.Errorf("%s: inputs %v outputs %v size %d: want a 2x2 or larger problem", e.Name, e.Inputs, e.Outputs, e.Size)
		}
	}
	if got, want := strings.Join(names, " "), strings.Join(embeddedTemplates, " "); got != want {
		t.Errorf("List names = %s, want %s", got, want)
	}
}

// The column's inputs depend on CONFIG through when: conditions; List
// shows those of the default configuration (LV).
func TestListColumnDefaultConfig(t *testing.T) {
	entries, err := New("").List()
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.Name == "column" {
			if got := strings.Join(e.Inputs, ","); got != "L,V" {
				t.Errorf("column inputs %s, want L,V", got)
			}
			if got := strings.Join(e.Outputs, ","); got != "yD,xB" {
				t.Errorf("column outputs %s, want yD,xB", got)
			}
			return
		}
	}
	t.Fatal("no column template")
}

const userTemplate = `model: my-mixer
about: >-
  A user's own mixer. Second sentence.
inputs:
  a: {value: 1}
  b: {value: 2}
outputs:
  m: {span: 1}
variables:
  m: {guess: 1}
equations:
  total: m = a + b
`

func userLibrary(t *testing.T) (*Library, string) {
	t.Helper()
	dir := t.TempDir()
	write := func(name, text string) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("mixer.yaml", userTemplate)
	write("column.yaml", strings.Replace(userTemplate, "A user's own mixer.", "My column variant.", 1))
	write("broken.yml", "model: [unclosed\n")
	write("notes.txt", "not a template")
	write("bad name.yaml", userTemplate)
	if err := os.Mkdir(filepath.Join(dir, "sub.yaml"), 0o755); err != nil {
		t.Fatal(err)
	}
	return New(dir), dir
}

func TestListUser(t *testing.T) {
	lib, dir := userLibrary(t)
	entries, err := lib.List()
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]Entry{}
	var order []string
	for _, e := range entries {
		got[e.Name] = e
		order = append(order, e.Name)
	}
	if want := "blender broken column cstr flash flash-constk heated-tank mixer"; strings.Join(order, " ") != want {
		t.Errorf("names %s, want %s", strings.Join(order, " "), want)
	}
	mixer := got["mixer"]
	if mixer.Source != filepath.Join(dir, "mixer.yaml") || mixer.Overrides || mixer.Summary != "A user's own mixer." ||
		strings.Join(mixer.Inputs, ",") != "a,b" || strings.Join(mixer.Outputs, ",") != "m" || mixer.Size != int64(len(userTemplate)) {
		t.Errorf("mixer entry %+v", mixer)
	}
	col := got["column"]
	if !col.Overrides || col.Source != filepath.Join(dir, "column.yaml") || col.Summary != "My column variant." {
		t.Errorf("column entry %+v: want the user's file, marked as overriding", col)
	}
	if b := got["broken"]; b.Problem == "" || !strings.Contains(b.Problem, "YAML") {
		t.Errorf("broken entry %+v: want a problem naming YAML", b)
	}
	if got["blender"].Source != SourceEmbedded {
		t.Errorf("blender should stay embedded: %+v", got["blender"])
	}
}

func TestListMissingUserDir(t *testing.T) {
	entries, err := New(filepath.Join(t.TempDir(), "nope")).List()
	if err != nil || len(entries) != len(embeddedTemplates) {
		t.Errorf("List with a missing user dir = %d entries, %v; want the embedded ones", len(entries), err)
	}
}

func TestOpen(t *testing.T) {
	lib, dir := userLibrary(t)
	tests := []struct {
		name, display, contains string
	}{
		{"blender", "lib:blender", "model: blender"},
		{"column", filepath.Join(dir, "column.yaml"), "My column variant."},
		{"mixer", filepath.Join(dir, "mixer.yaml"), "model: my-mixer"},
	}
	for _, tt := range tests {
		rc, display, err := lib.Open(tt.name)
		if err != nil {
			t.Errorf("Open(%s): %v", tt.name, err)
			continue
		}
		data, _ := io.ReadAll(rc)
		rc.Close()
		if display != tt.display || !strings.Contains(string(data), tt.contains) {
			t.Errorf("Open(%s) = %q, display %q; want display %q and %q", tt.name, firstLine(data), display, tt.display, tt.contains)
		}
	}
	// Without the user dir, column is the embedded template.
	rc, display, err := New("").Open("column")
	if err != nil || display != "lib:column" {
		t.Fatalf("embedded column: %q, %v", display, err)
	}
	rc.Close()
}

func firstLine(b []byte) string { s, _, _ := strings.Cut(string(b), "\n"); return s }

func TestOpenErrors(t *testing.T) {
	lib, _ := userLibrary(t)
	tests := []struct{ name, want string }{
		{"colum", `unknown template "colum": did you mean lib:column? (available: blender, broken, column, cstr, flash, flash-constk, heated-tank, mixer; ` + "`library list`" + ` shows them)`},
		{"heated_tank", `did you mean lib:heated-tank?`},
		{"Flash", `did you mean lib:flash?`},
		{"zzzzzzzzzzzz", `unknown template "zzzzzzzzzzzz" (available: `},
		{"", "empty template name: write lib:NAME"},
		{"../column", `template name "../column": use letters, digits`},
		{"column.yaml", `template name "column.yaml": use letters`},
	}
	for _, tt := range tests {
		_, _, err := lib.Open(tt.name)
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("Open(%q) error = %v, want it to contain %q", tt.name, err, tt.want)
		}
	}
	_, _, err := lib.Open("colum")
	var ute *UnknownTemplateError
	if !errors.As(err, &ute) || ute.Suggestion != "column" || len(ute.Available) != 8 {
		t.Errorf("Open(colum) error %#v, want *UnknownTemplateError suggesting column", err)
	}
}

func TestCopy(t *testing.T) {
	lib := New("")
	dir := t.TempDir()
	want, err := fs.ReadFile(lib.fsys, "flash.yaml")
	if err != nil {
		t.Fatal(err)
	}

	// Into an existing directory: DIR/NAME.yaml.
	if err := lib.Copy("flash", dir); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(filepath.Join(dir, "flash.yaml"))
	if err != nil || string(got) != string(want) {
		t.Fatalf("copied file differs from the template (%v)", err)
	}
	// Refuses to overwrite.
	err = lib.Copy("cstr", filepath.Join(dir, "flash.yaml"))
	if !errors.Is(err, fs.ErrExist) || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("Copy over an existing file = %v, want fs.ErrExist", err)
	}
	if again, _ := os.ReadFile(filepath.Join(dir, "flash.yaml")); string(again) != string(want) {
		t.Error("Copy changed an existing file")
	}
	// To an explicit file name.
	if err := lib.Copy("cstr", filepath.Join(dir, "my-reactor.yaml")); err != nil {
		t.Fatal(err)
	}
	// Default destination: NAME.yaml in the working directory.
	t.Chdir(dir)
	if err := lib.Copy("blender", ""); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(dir, "blender.yaml")); err != nil {
		t.Error(err)
	}
	// Unknown name.
	if err := lib.Copy("blendr", ""); err == nil || !strings.Contains(err.Error(), "did you mean lib:blender?") {
		t.Errorf("Copy(blendr) = %v", err)
	}
	// The copy is a user template once it sits in the user's directory.
	entries, err := New(dir).List()
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.Name == "my-reactor" && e.Source != filepath.Join(dir, "my-reactor.yaml") {
			t.Errorf("my-reactor: %+v", e)
		}
		if e.Name == "flash" && !e.Overrides {
			t.Errorf("flash copied into the user dir should override: %+v", e)
		}
	}
}

func TestFirstSentence(t *testing.T) {
	tests := []struct{ in, want string }{
		{"One. Two.", "One."},
		{"A column (Skogestad and Morari, Ind. Eng. Chem. Res., 1988). Next", "A column (Skogestad and Morari, Ind. Eng. Chem. Res., 1988)."},
		{"Ends without a stop", "Ends without a stop"},
		{"Keeps 0.5 kmol and e.g. lowercase. Stops Here.", "Keeps 0.5 kmol and e.g. lowercase."},
		{"Runs\n  over   lines. More.", "Runs over lines."},
		{"", ""},
	}
	for _, tt := range tests {
		if got := FirstSentence(tt.in); got != tt.want {
			t.Errorf("FirstSentence(%q) = %q, want %q", tt.in, got, tt.want)
		}
	}
}

func TestEditDistance(t *testing.T) {
	tests := []struct {
		a, b string
		d    int
	}{
		{"", "", 0}, {"abc", "", 3}, {"kitten", "sitting", 3}, {"colum", "column", 1}, {"flash", "flahs", 2},
	}
	for _, tt := range tests {
		if d := editDistance(tt.a, tt.b); d != tt.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tt.a, tt.b, d, tt.d)
		}
	}
}

func TestLoad(t *testing.T) {
	lib, dir := userLibrary(t)
	tests := []struct {
		arg, model, errWant string
	}{
		{"lib:blender", "blender", ""},
		{"lib:mixer", "my-mixer", ""},
		{filepath.Join(dir, "mixer.yaml"), "my-mixer", ""},
		{"lib:colum", "", "did you mean lib:column?"},
		// Messages about a user template name its file, with a position.
		{"lib:broken", "", filepath.Join(dir, "broken.yml") + ":2:1: YAML syntax"},
		{filepath.Join(dir, "absent.yaml"), "", "no such file"},
	}
	for _, tt := range tests {
		f, err := lib.Load(tt.arg)
		switch {
		case tt.errWant != "":
			if err == nil || !strings.Contains(err.Error(), tt.errWant) {
				t.Errorf("Load(%s) error = %v, want it to contain %q", tt.arg, err, tt.errWant)
			}
		case err != nil:
			t.Errorf("Load(%s): %v", tt.arg, err)
		case f.Model != tt.model:
			t.Errorf("Load(%s) model %q, want %q", tt.arg, f.Model, tt.model)
		}
	}
	// A file literally named lib:x is reached as ./lib:x.
	t.Chdir(dir)
	if err := os.WriteFile("lib:mine.yaml", []byte(userTemplate), 0o644); err != nil {
		t.Skipf("file system refuses the name: %v", err)
	}
	if f, err := lib.Load("./lib:mine.yaml"); err != nil || f.Model != "my-mixer" {
		t.Errorf("Load(./lib:mine.yaml) = %v", err)
	}
	if _, err := lib.Load("lib:mine.yaml"); err == nil {
		t.Error("Load(lib:mine.yaml) should be a template reference, and an invalid name")
	}
}
