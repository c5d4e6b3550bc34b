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

// PairingShortfall says why a relay with a pairing paired only n
// commands with their samples when want were needed: from its counts, the
// likeliest cause first.
func PairingShortfall(s emulate.Stats, n, want int) string {
	f := s.PairingFailures
	var why string
	switch {
	case s.SensorToController.Forwarded == 0:
		why = "no sensor datagram reached the relay: is the rig's node sending to --listen?"
	case s.ControllerToActuator.Forwarded == 0:
		why = "no command came back from the controller: is it listening at --controller and answering the relay?"
	case f["sample_without_sequence"] > 0 && f["sample_without_sequence"] >= s.SensorToController.Forwarded/2:
		why = "the sensor datagrams carry no sequence number where the loop's decode.sequence says: the relay cannot tell which sample a command answers"
	case f["command_without_sequence"] > 0:
		why = "the commands carry no sequence number where the loop's command_decode says: the relay cannot tell which sample they answer"
	default:
		why = "the commands name samples the relay did not send (check that command_decode points at the answered sample's number)"
	}
	return fmt.Sprintf("%d commands paired with their samples, want at least %d: %s (samples %d, commands %d, unpaired %v)",
		n, want, why, s.SensorToController.Forwarded, s.ControllerToActuator.Forwarded, f)
}
