// Package library holds loopwright's embedded model templates and the user's
// own template directory, resolves template names, and carries the
// pure-component data (molar masses, Antoine constants) the templates use.
//
// A MODEL argument that starts with "lib:" always names a template:
// "lib:column" is the column template, from the user's directory when it has
// a column.yaml, else the embedded one. A file whose name really starts with
// "lib:" is reached with a path prefix, "./lib:x.yaml".
//
// The embedded templates are blender, column, cstr, flash, flash-constk and
// heated-tank; each says in its about paragraph what scenario it describes
// and which published method it follows.
package library
