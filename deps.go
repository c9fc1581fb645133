//go:build tools

package main

import (
	_ "github.com/expr-lang/expr/parser"
	_ "github.com/schollz/progressbar/v3"
	_ "github.com/spf13/cobra"
	_ "gonum.org/v1/gonum/mat"
	_ "gonum.org/v1/plot"
	_ "gopkg.in/yaml.v3"
)
