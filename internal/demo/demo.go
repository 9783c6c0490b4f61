package demo

import (
	"bytes"
	_ "embed"
	"fmt"
	"math"
	"math/rand/v2"
)

// CSV is the embedded demo table, kiln.csv, as written by Generate(Seed, Rows).
//
//go:embed kiln.csv
var CSV []byte

// Name, Target and Ignore describe the demo table for the demo command;
// Seed and Rows are what Generate was given to write kiln.csv.
const (
	Name   = "kiln.csv"
	Target = "outcome"
	Ignore = "piece_id"
	Seed   = 2026
	Rows   = 360
)

// Generate writes the invented kiln log: rows pieces from a seeded PCG.
func Generate(seed uint64, rows int) []byte {
	rng := rand.New(rand.NewPCG(seed, 0x6b696c6e))
	clays := []string{"stoneware", "porcelain", "earthenware", "raku"}
	coats := []string{"thin", "medium", "thick"}
	var b bytes.Buffer
	b.WriteString("piece_id,clay_body,glaze_coat,peak_temp_c,ramp_c_per_hour,hold_min,wall_mm,humidity_pct,outcome\n")
	for i := 0; i < rows; i++ {
		clay := rng.IntN(len(clays))
		coat := rng.IntN(len(coats))
		peak := 1180 + 80*rng.Float64() + 30*float64(clay%2)
		ramp := 60 + 180*rng.Float64()
		hold := 5 + math.Round(40*rng.Float64())
		wall := 3 + 7*rng.Float64()
		humidity := 30 + 45*rng.Float64()

		// Latent tendencies, each roughly linear in the readings.
		crack := 0.018*(ramp-150) + 0.55*(wall-6.5) + 0.03*(humidity-52) + 0.5*indicator(clay == 3)
		bloat := 0.05*(peak-1240) + 0.6*float64(coat-1) - 0.03*(hold-25) + 0.4*indicator(clay == 2)
		sound := 0.9
		noise := func() float64 { return 0.55 * rng.NormFloat64() }
		scores := []float64{sound + noise(), crack + noise(), bloat + noise()}
		outcome := []string{"sound", "cracked", "bloated"}[argmax(scores)]

		coatText := coats[coat]
		if rng.Float64() < 0.06 {
			coatText = ""
		}
		humidityText := fmt.Sprintf("%.1f", humidity)
		if rng.Float64() < 0.08 {
			humidityText = "NA"
		}
		fmt.Fprintf(&b, "K%04d,%s,%s,%.0f,%.0f,%.0f,%.1f,%s,%s\n",
			i+1, clays[clay], coatText, peak, ramp, hold, wall, humidityText, outcome)
	}
	return b.Bytes()
}

func argmax(xs []float64) int {
	best := 0
	for i, x := range xs {
		if x > xs[best] {
			best = i
		}
	}
	return best
}

func indicator(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
