// Package cmdspec describes deltafit's command tree as data: what
// `deltafit __commands` prints as JSON and cmd/deltafit-docs turns into
// man pages, so that the generator of the documentation is a program of
// its own and its dependencies stay out of the deltafit binary.
package cmdspec

// Command is one command: its help texts, flags and subcommands.
type Command struct {
	Name       string `json:"name"`
	Use        string `json:"use"`
	Short      string `json:"short"`
	Long       string `json:"long,omitempty"`
	Example    string `json:"example,omitempty"`
	ExitStatus string `json:"exit_status,omitempty"` // what its help ends with
	Runnable   bool   `json:"runnable"`
	// Flags are the command's own flags; Persistent those it passes on to
	// its subcommands.
	Flags      []Flag    `json:"flags,omitempty"`
	Persistent []Flag    `json:"persistent,omitempty"`
	Commands   []Command `json:"commands,omitempty"`
}

// Flag is one flag, as its help shows it.
type Flag struct {
	Name        string `json:"name"`
	Shorthand   string `json:"shorthand,omitempty"`
	Usage       string `json:"usage"`
	Type        string `json:"type"` // string, bool, int, stringSlice, ...
	Default     string `json:"default"`
	NoOptDefVal string `json:"no_opt_default,omitempty"` // the value of a flag given without one (true for a bool)
}
