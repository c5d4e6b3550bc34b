package cli

// ParseInterspersed parses args with the flag set, allowing flags before
// and after the positional arguments ("monitor predict loop.yaml
// --json"), which it returns in order.
func (f *Flags) ParseInterspersed(args []string) ([]string, error) {
	var pos []string
	for {
		if err := f.Parse(args); err != nil {
			return nil, err
		}
		if f.NArg() == 0 {
			return pos, nil
		}
		pos = append(pos, f.Arg(0))
		args = f.Args()[1:]
	}
}
