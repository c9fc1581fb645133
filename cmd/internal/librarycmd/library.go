// Package librarycmd implements 'loopwright library': list, show and copy
// the model templates (embedded, and the user's own directory).
package librarycmd

import (
	"fmt"
	"io"
	"strings"

	"github.com/spf13/cobra"

	"github.com/loopwright/loopwright/cmd/internal/cli"
	"github.com/loopwright/loopwright/cmd/internal/modelarg"
	"github.com/loopwright/loopwright/cmd/internal/render"
	"github.com/loopwright/loopwright/library"
)

// LibraryOptions are the inputs of the library subcommands.
type LibraryOptions struct {
	F          *cli.Factory
	LibraryDir string
	Format     string
	Action     string // list, show, copy
	Name       string
	Dest       string
}

// NewCmdLibrary returns the library command with its list, show and copy
// subcommands. runF replaces the run function in tests.
func NewCmdLibrary(f *cli.Factory, runF func(*LibraryOptions) error) *cobra.Command {
	opts := &LibraryOptions{F: f}
	run := func(o *LibraryOptions) error {
		if runF != nil {
			return runF(o)
		}
		return libraryRun(o)
	}
	cmd := &cobra.Command{
		Use:   "library",
		Short: "List, show and copy model templates",
		Long: `The library holds model templates: the embedded ones, and the user's own
*.yaml files in a directory chosen by --library, else $LOOPWRIGHT_LIBRARY,
else loopwright/templates under the user configuration directory. A user
file adds a template, or overrides the embedded one of the same name.

Any command that takes a MODEL takes a template as lib:NAME. A MODEL argument
that starts with lib: is always a template; reach a file with such a name as
./lib:NAME.`,
		Args: cobra.NoArgs,
	}
	modelarg.RegisterLibrary(cmd, &opts.LibraryDir)
	cmd.PersistentFlags().AddFlag(cmd.Flags().Lookup("library"))

	list := &cobra.Command{
		Use:   "list",
		Short: "List the templates with their inputs and outputs",
		Args:  cobra.NoArgs,
		RunE: func(c *cobra.Command, _ []string) error {
			opts.Action = "list"
			return run(opts)
		},
	}
	list.Flags().StringVar(&opts.Format, "format", "table", "output format: table, json or csv")
	show := &cobra.Command{
		Use:   "show NAME",
		Short: "Print a template's model file",
		Args:  cobra.ExactArgs(1),
		RunE: func(c *cobra.Command, args []string) error {
			opts.Action, opts.Name = "show", strings.TrimPrefix(args[0], library.Prefix)
			return run(opts)
		},
	}
	cp := &cobra.Command{
		Use:   "copy NAME [DEST]",
		Short: "Copy a template to a file you can edit (never overwrites)",
		Example: `  loopwright library copy column my-column.yaml
  loopwright library copy flash "$(loopwright library dir)"`,
		Args: cobra.RangeArgs(1, 2),
		RunE: func(c *cobra.Command, args []string) error {
			opts.Action, opts.Name = "copy", strings.TrimPrefix(args[0], library.Prefix)
			if len(args) == 2 {
				opts.Dest = args[1]
			}
			return run(opts)
		},
	}
	dir := &cobra.Command{
		Use:   "dir",
		Short: "Print the user's template directory",
		Args:  cobra.NoArgs,
		RunE: func(c *cobra.Command, _ []string) error {
			opts.Action = "dir"
			return run(opts)
		},
	}
	cmd.AddCommand(list, show, cp, dir)
	return cmd
}

// EntryJSON is the JSON form of one listed template.
type EntryJSON struct {
	Name      string   `json:"name"`
	Summary   string   `json:"summary"`
	Size      int64    `json:"size"`
	Inputs    []string `json:"inputs"`
	Outputs   []string `json:"outputs"`
	Source    string   `json:"source"`
	Overrides bool     `json:"overrides_embedded"`
	Problem   string   `json:"problem,omitempty"`
}

func libraryRun(opts *LibraryOptions) error {
	lib, err := modelarg.Library(opts.F, opts.LibraryDir)
	if err != nil {
		return err
	}
	out := opts.F.IO.Out
	switch opts.Action {
	case "dir":
		fmt.Fprintln(out, lib.UserDir())
		return nil
	case "show":
		rc, _, err := lib.Open(opts.Name)
		if err != nil {
			return &cli.InputError{Err: err}
		}
		defer rc.Close()
		_, err = io.Copy(out, rc)
		return err
	case "copy":
		if err := lib.Copy(opts.Name, opts.Dest); err != nil {
			return &cli.InputError{Err: err}
		}
		dest := opts.Dest
		if dest == "" {
			dest = opts.Name + ".yaml"
		}
		fmt.Fprintf(opts.F.IO.ErrOut, "copied template %s to %s\n", opts.Name, dest)
		return nil
	}
	format, err := render.ParseFormat(opts.Format, render.Table, render.JSON, render.CSV)
	if err != nil {
		return &cli.FlagError{Err: err}
	}
	entries, err := lib.List()
	if err != nil {
		return &cli.InputError{Err: err}
	}
	if format == render.JSON {
		js := make([]EntryJSON, 0, len(entries))
		for _, e := range entries {
			js = append(js, EntryJSON{e.Name, e.Summary, e.Size, nonNil(e.Inputs), nonNil(e.Outputs), e.Source, e.Overrides, e.Problem})
		}
		return render.WriteJSON(out, js)
	}
	t := &render.TableData{
		Headers: []string{"name", "source", render.Header("size", "bytes"), "inputs", "outputs", "summary"},
		Align:   []render.Align{render.Left, render.Left, render.Right},
	}
	for _, e := range entries {
		src := e.Source
		if e.Overrides {
			src += " (overrides embedded)"
		}
		summary := e.Summary
		if e.Problem != "" {
			summary = "cannot be read: " + e.Problem
		}
		t.Rows = append(t.Rows, []string{e.Name, src, fmt.Sprint(e.Size), strings.Join(e.Inputs, ","), strings.Join(e.Outputs, ","), summary})
	}
	if format == render.CSV {
		return t.WriteCSV(out)
	}
	t.Notes = []string{"", "Use a template as lib:NAME, for example: loopwright pair lib:" + firstName(entries)}
	return t.Write(out)
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}

func firstName(e []library.Entry) string {
	for _, x := range e {
		if x.Name == "column" {
			return x.Name
		}
	}
	if len(e) > 0 {
		return e[0].Name
	}
	return "NAME"
}
