// Package readme holds the test that runs the shell commands of the repository's README.md in
// order, as a new user would (see readme_test.go). It has no code of its own: it is a package so
// that the walkthrough, which builds and runs the binaries, has its own test time budget.
package readme
