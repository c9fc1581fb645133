package library

import (
	"embed"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"
)

//go:embed templates/*.yaml
var embedded embed.FS

// Prefix marks a MODEL argument as a template reference: "lib:column".
const Prefix = "lib:"

// EnvDir is the environment variable that names the user's template
// directory when no flag does.
const EnvDir = "LOOPWRIGHT_LIBRARY"

// Library is the set of templates a user can name: the embedded ones plus
// the *.yaml files of the user's directory, which add to them and may
// override them by name. The zero value is not usable; call New.
type Library struct {
	fsys    fs.FS  // embedded templates, files NAME.yaml at the root
	userDir string // "" = no user directory
}

// New returns the library of the embedded templates and the user's
// directory userDir ("" for none). The directory need not exist: a missing
// directory simply adds nothing.
func New(userDir string) *Library {
	sub, err := fs.Sub(embedded, "templates")
	if err != nil {
		panic(err) // the embed pattern guarantees the directory
	}
	return &Library{fsys: sub, userDir: userDir}
}

// UserDir returns the user's template directory ("" when there is none).
func (l *Library) UserDir() string { return l.userDir }

// DefaultDir returns the default user template directory,
// os.UserConfigDir()/loopwright/templates.
func DefaultDir() (string, error) {
	cfg, err := os.UserConfigDir()
	if err != nil {
		return "", fmt.Errorf("cannot find the user configuration directory (%v): set %s or pass --library DIR", err, EnvDir)
	}
	return filepath.Join(cfg, "loopwright", "templates"), nil
}

// ResolveDir chooses the user's template directory: the flag when it is
// not empty, else $LOOPWRIGHT_LIBRARY when set, else DefaultDir. getenv is
// os.Getenv in production (nil means os.Getenv).
func ResolveDir(flag string, getenv func(string) string) (string, error) {
	if flag != "" {
		return filepath.Clean(flag), nil
	}
	if getenv == nil {
		getenv = os.Getenv
	}
	if env := getenv(EnvDir); env != "" {
		return filepath.Clean(env), nil
	}
	return DefaultDir()
}

// IsTemplateRef reports whether a MODEL argument names a template, and
// which. Every argument that starts with "lib:" is a template reference,
// even when a file of that name exists: such a file is reached with a path
// prefix, "./lib:x.yaml".
func IsTemplateRef(arg string) (name string, ok bool) {
	if !strings.HasPrefix(arg, Prefix) {
		return "", false
	}
	return strings.TrimPrefix(arg, Prefix), true
}

// Entry describes one template as List shows it.
type Entry struct {
	Name    string   // template name, used as lib:Name
	Summary string   // first sentence of the about paragraph
	Size    int64    // bytes
	Inputs  []string // manipulated variables, with the default constants
	Outputs []string // controlled variables, with the default constants

	// Source is "embedded" or the path of the user's file.
	Source string
	// Overrides is true when a user file hides the embedded template of the
	// same name.
	Overrides bool
	// Problem says why a user file could not be summarised ("" when it
	// could); the entry is listed anyway so that the user sees it.
	Problem string
}

// SourceEmbedded is Entry.Source for a template built into loopwright.
const SourceEmbedded = "embedded"

// List returns every template, sorted by name. User templates add to the
// embedded ones and override those of the same name. A user directory that
// does not exist adds nothing; one that cannot be read is an error.
func (l *Library) List() ([]Entry, error) {
	byName := map[string]Entry{}
	names, err := l.embeddedNames()
	if err != nil {
		return nil, err
	}
	for _, name := range names {
		data, err := fs.ReadFile(l.fsys, name+".yaml")
		if err != nil {
			return nil, err
		}
		e := Entry{Name: name, Size: int64(len(data)), Source: SourceEmbedded}
		if err := summarise(&e, data); err != nil {
			return nil, fmt.Errorf("embedded template %s: %w", name, err) // our bug, caught by tests
		}
		byName[name] = e
	}
	user, err := l.userFiles()
	if err != nil {
		return nil, err
	}
	for _, name := range sortedKeys(user) {
		p := user[name]
		e := Entry{Name: name, Source: p}
		_, e.Overrides = byName[name]
		data, err := os.ReadFile(p)
		if err != nil {
			e.Problem = err.Error()
		} else {
			e.Size = int64(len(data))
			if err := summarise(&e, data); err != nil {
				e.Problem = err.Error()
			}
		}
		byName[name] = e
	}
	out := make([]Entry, 0, len(byName))
	for _, name := range sortedKeys(byName) {
		out = append(out, byName[name])
	}
	return out, nil
}

// Names returns the names of all templates, sorted.
func (l *Library) Names() ([]string, error) {
	set := map[string]bool{}
	names, err := l.embeddedNames()
	if err != nil {
		return nil, err
	}
	for _, n := range names {
		set[n] = true
	}
	user, err := l.userFiles()
	if err != nil {
		return nil, err
	}
	for n := range user {
		set[n] = true
	}
	return sortedKeys(set), nil
}

// Open opens template name (without the "lib:" prefix): the user's file
// when the user directory has one, else the embedded template. The display
// name is what messages should call the file: "lib:NAME" for an embedded
// template, the file's path for a user template (so that an editor can jump
// to it). An unknown name gives an *UnknownTemplateError.
func (l *Library) Open(name string) (io.ReadCloser, string, error) {
	if err := checkName(name); err != nil {
		return nil, "", err
	}
	user, err := l.userFiles()
	if err != nil {
		return nil, "", err
	}
	if p, ok := user[name]; ok {
		f, err := os.Open(p)
		if err != nil {
			return nil, "", fmt.Errorf("template %s: %w", name, err)
		}
		return f, p, nil
	}
	f, err := l.fsys.Open(name + ".yaml")
	if errors.Is(err, fs.ErrNotExist) {
		return nil, "", l.unknown(name)
	}
	if err != nil {
		return nil, "", err
	}
	return f, Prefix + name, nil
}

// Copy writes template name to dest so that the user can edit it. An empty
// dest means NAME.yaml in the current directory; a dest that is an existing
// directory receives NAME.yaml. Copy never overwrites: an existing
// destination is an error wrapping fs.ErrExist.
func (l *Library) Copy(name, dest string) error {
	rc, _, err := l.Open(name)
	if err != nil {
		return err
	}
	defer rc.Close()
	data, err := io.ReadAll(rc)
	if err != nil {
		return err
	}
	if dest == "" {
		dest = name + ".yaml"
	} else if st, err := os.Stat(dest); err == nil && st.IsDir() {
		dest = filepath.Join(dest, name+".yaml")
	}
	f, err := os.OpenFile(dest, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s already exists: choose another destination or remove it first: %w", dest, fs.ErrExist)
	}
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// UnknownTemplateError is returned for a template name that the library
// does not have.
type UnknownTemplateError struct {
	Name       string
	Suggestion string   // the nearest known name, "" when none is close
	Available  []string // every known name, sorted
}

func (e *UnknownTemplateError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "unknown template %q", e.Name)
	if e.Suggestion != "" {
		fmt.Fprintf(&b, ": did you mean %s%s?", Prefix, e.Suggestion)
	}
	if len(e.Available) > 0 {
		fmt.Fprintf(&b, " (available: %s; `library list` shows them)", strings.Join(e.Available, ", "))
	}
	return b.String()
}

func (l *Library) unknown(name string) error {
	names, _ := l.Names() // a directory error here would have surfaced in Open
	return &UnknownTemplateError{Name: name, Suggestion: nearest(name, names), Available: names}
}

// checkName rejects names that could escape the template directories.
func checkName(name string) error {
	if name == "" {
		return fmt.Errorf("empty template name: write %sNAME, for example %scolumn", Prefix, Prefix)
	}
	if !validName(name) {
		return fmt.Errorf("template name %q: use letters, digits, '-' and '_' only (no paths or extensions)", name)
	}
	return nil
}

func validName(name string) bool {
	if name == "" {
		return false
	}
	for i, r := range name {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9':
		case (r == '-' || r == '_') && i > 0:
		default:
			return false
		}
	}
	return true
}

func (l *Library) embeddedNames() ([]string, error) {
	ents, err := fs.ReadDir(l.fsys, ".")
	if err != nil {
		return nil, err
	}
	var names []string
	for _, e := range ents {
		if n, ok := strings.CutSuffix(e.Name(), ".yaml"); ok && !e.IsDir() {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	return names, nil
}

// userFiles maps template names to the files of the user directory. A
// NAME.yaml wins over a NAME.yml. Files whose base name is not a valid
// template name are ignored.
func (l *Library) userFiles() (map[string]string, error) {
	out := map[string]string{}
	if l.userDir == "" {
		return out, nil
	}
	ents, err := os.ReadDir(l.userDir)
	if errors.Is(err, fs.ErrNotExist) {
		return out, nil
	}
	if err != nil {
		return nil, fmt.Errorf("template directory: %w", err)
	}
	for _, e := range ents {
		if e.IsDir() {
			continue
		}
		ext := path.Ext(e.Name())
		if ext != ".yaml" && ext != ".yml" {
			continue
		}
		name := strings.TrimSuffix(e.Name(), ext)
		if !validName(name) {
			continue
		}
		if _, seen := out[name]; seen && ext == ".yml" {
			continue
		}
		out[name] = filepath.Join(l.userDir, e.Name())
	}
	return out, nil
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// nearest returns the candidate closest to name by edit distance (ignoring
// case), or "" when none is close enough to be a likely typo.
func nearest(name string, candidates []string) string {
	best, bestD := "", -1
	lname := strings.ToLower(name)
	for _, c := range candidates {
		lc := strings.ToLower(c)
		d := editDistance(lname, lc)
		if strings.HasPrefix(lc, lname) || strings.HasPrefix(lname, lc) {
			d = min(d, 1)
		}
		if bestD < 0 || d < bestD {
			best, bestD = c, d
		}
	}
	if bestD < 0 || bestD > max(2, len([]rune(name))/3) {
		return ""
	}
	return best
}

// editDistance is the Levenshtein distance between a and b, in runes.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
