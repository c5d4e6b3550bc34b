package links

import (
	"fmt"

	"rigwire/emulate"
	"rigwire/profiles"
)

// PairingFromLoop reads the rig's loop file for the relay's pairing: its
// decode section's sequence (where a sample carries its number) and its
// command_decode (where a command carries the number of the sample it
// answers). A loop without either is refused with what is missing: the
// relay cannot pair commands with samples without both.
func PairingFromLoop(path string) (*emulate.Pairing, error) {
	loop, err := profiles.LoadLoop(path)
	if err != nil {
		return nil, err
	}
	switch {
	case loop.Decode.Format == "" || loop.Decode.Sequence == nil:
		return nil, fmt.Errorf("loop %s: no decode.sequence: the sensor datagrams carry no sequence number the relay can read, so it cannot pair commands with samples", path)
	case loop.CommandDecode.Format == "":
		return nil, fmt.Errorf("loop %s: no command_decode: say where a command carries the sequence number of the sample it answers (profiles/formats.md, command_decode)", path)
	}
	return &emulate.Pairing{Sample: loop.Decode, Command: loop.CommandDecode}, nil
}
