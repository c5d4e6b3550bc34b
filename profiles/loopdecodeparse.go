package profiles

import (
	"rigwire/profiles/datagram"
	"rigwire/profiles/yamlpos"
	"slices"
	"strings"
)

// parseDecode reads the decode section of a loop file (profiles/formats.md, the loop file's decode):
//
//	decode: {format: text, separator: ",", outputs: [{field: 2}], sequence: {field: 0}}
//	decode: {format: binary, outputs: [{offset: 8, type: float64, order: little}],
//	         sequence: {offset: 0, type: uint32, order: big}}
//
// outputs must list one field per plant output (p); a binary order
// defaults to little. The sequence of a binary format must be an integer
// type.
func parseDecode(f yamlpos.Field, d *datagram.Layout, p int) error {
	keys, err := f.Mapping("format", "separator", "outputs", "sequence", "sample_time")
	if err != nil {
		return err
	}
	if err := parseFormat(f, keys, d); err != nil {
		return err
	}
	if keys["outputs"].IsZero() {
		return missing(f, "outputs")
	}
	items, err := keys["outputs"].Seq()
	if err != nil {
		return err
	}
	if len(items) != p {
		return keys["outputs"].Errorf("want %d fields (one per output of plant.c), got %d", p, len(items))
	}
	for _, it := range items {
		df, err := parseDecodeField(it, d.Format, false)
		if err != nil {
			return err
		}
		d.Outputs = append(d.Outputs, df)
	}
	if s := keys["sequence"]; !s.IsNull() {
		df, err := parseDecodeField(s, d.Format, true)
		if err != nil {
			return err
		}
		d.Sequence = &df
	}
	if s := keys["sample_time"]; !s.IsNull() {
		return parseSampleTime(s, d)
	}
	return nil
}

// parseSampleTime reads decode.sample_time: where the sample time sits
// (a field as the outputs', any type) and its unit.
//
//	sample_time: {field: 1, unit: ns}
func parseSampleTime(f yamlpos.Field, d *datagram.Layout) error {
	keys, err := f.Mapping("field", "offset", "type", "order", "pointer", "unit")
	if err != nil {
		return err
	}
	u := keys["unit"]
	if u.IsNull() {
		return missing(f, "unit")
	}
	name, err := u.Text()
	if err != nil {
		return err
	}
	unit, ok := datagram.TimeUnits[name]
	if !ok {
		return u.Errorf("want ns, us, ms or s, got %s", u.Got())
	}
	// The position keys alone, through the fields' own parser.
	pos := f
	if n := f.Node; n != nil {
		c := *n
		c.Content = nil
		for i := 0; i+1 < len(n.Content); i += 2 {
			if n.Content[i].Value != "unit" {
				c.Content = append(c.Content, n.Content[i], n.Content[i+1])
			}
		}
		pos.Node = &c
	}
	df, err := parseDecodeField(pos, d.Format, false)
	if err != nil {
		return err
	}
	d.SampleTime, d.TimeUnit = &df, unit
	return nil
}

// parseCommandDecode reads the command_decode section: where a command
// datagram carries the sequence number of the sample it answers, so that
// the relay can pair each command with its sample (profiles/formats.md):
//
//	command_decode: {format: text, sequence: {field: 0}}
//
// The sequence is required; the command's values are not decoded.
func parseCommandDecode(f yamlpos.Field, d *datagram.Layout) error {
	keys, err := f.Mapping("format", "separator", "sequence")
	if err != nil {
		return err
	}
	if err := parseFormat(f, keys, d); err != nil {
		return err
	}
	s := keys["sequence"]
	if s.IsNull() {
		return missing(f, "sequence")
	}
	df, err := parseDecodeField(s, d.Format, true)
	if err != nil {
		return err
	}
	d.Sequence = &df
	return nil
}

// parseFormat reads a decode section's format and separator.
func parseFormat(f yamlpos.Field, keys map[string]yamlpos.Field, d *datagram.Layout) error {
	var err error
	if keys["format"].IsZero() {
		return missing(f, "format")
	}
	if d.Format, err = keys["format"].Text(); err != nil {
		return err
	}
	if d.Format != "text" && d.Format != "binary" && d.Format != "json" {
		return keys["format"].Errorf("want text, binary or json, got %s", keys["format"].Got())
	}
	if sep := keys["separator"]; !sep.IsNull() {
		if d.Format != "text" {
			return sep.Errorf("only for format text")
		}
		if d.Separator, err = sep.Text(); err != nil {
			return err
		}
		if d.Separator == "" {
			return sep.Errorf("want a non-empty separator")
		}
	} else if d.Format == "text" {
		d.Separator = ","
	}
	return nil
}

func parseDecodeField(f yamlpos.Field, format string, counter bool) (datagram.Field, error) {
	var df datagram.Field
	if format == "json" {
		keys, err := f.Mapping("pointer")
		if err != nil {
			return df, err
		}
		if keys["pointer"].IsZero() {
			return df, missing(f, "pointer")
		}
		p, err := keys["pointer"].Text()
		if err != nil {
			return df, err
		}
		if err := df.SetPointer(p); err != nil {
			return df, keys["pointer"].Errorf("%v", err)
		}
		return df, nil
	}
	if format == "text" {
		keys, err := f.Mapping("field")
		if err != nil {
			return df, err
		}
		if keys["field"].IsZero() {
			return df, missing(f, "field")
		}
		v, err := keys["field"].Int()
		if err != nil || v < 0 {
			return df, keys["field"].Errorf("want a field index ≥ 0, got %s", keys["field"].Got())
		}
		df.Field = v
		return df, nil
	}
	keys, err := f.Mapping("offset", "type", "order")
	if err != nil {
		return df, err
	}
	for _, k := range []string{"offset", "type"} {
		if keys[k].IsZero() {
			return df, missing(f, k)
		}
	}
	v, err := keys["offset"].Int()
	if err != nil || v < 0 {
		return df, keys["offset"].Errorf("want a byte offset ≥ 0, got %s", keys["offset"].Got())
	}
	df.Offset = v
	if df.Type, err = keys["type"].Text(); err != nil {
		return df, err
	}
	if !slices.Contains(datagram.BinaryTypes, df.Type) {
		return df, keys["type"].Errorf("want one of %s, got %s", strings.Join(datagram.BinaryTypes, ", "), keys["type"].Got())
	}
	if counter && strings.HasPrefix(df.Type, "float") {
		return df, keys["type"].Errorf("want an integer type for the sequence counter, got %s", keys["type"].Got())
	}
	df.Order = "little"
	if o := keys["order"]; !o.IsNull() {
		if df.Order, err = o.Text(); err != nil {
			return df, err
		}
		if df.Order != "little" && df.Order != "big" {
			return df, o.Errorf("want little or big, got %s", o.Got())
		}
	}
	return df, nil
}
