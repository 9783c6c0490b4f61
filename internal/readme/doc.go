// Package readme holds no code: its test runs every `sh` example of the
// repository's README.md as written, so that the README stays true.
package readme
