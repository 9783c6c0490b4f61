// Package layout holds no code: its test checks that imports point the way
// DEVELOPERS.md says (the pipeline's core free of arrow-go, cobra only in
// cmd, tablewriter and gonum/plot only in export).
package layout
