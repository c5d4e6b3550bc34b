package main

// parseInterspersed parses args with fs, allowing flags before and after
// the positional arguments, which it returns in order.
func parseInterspersed(fs *flags, args []string) ([]string, error) {
	var paths []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		if fs.NArg() == 0 {
			return paths, nil
		}
		paths = append(paths, fs.Arg(0))
		args = fs.Args()[1:]
	}
}
