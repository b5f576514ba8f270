package detector

import (
	"bytes"
	"fmt"

	"boxwright/project"
	"boxwright/suggest/detector/nn"
)

// EncodeModel serialises a trained model's weights and batch-norm
// statistics (the rest of what a stored model needs travels in
// project.Model's own fields).
func EncodeModel(m *Model) ([]byte, error) {
	var b bytes.Buffer
	if err := nn.WriteParams(&b, m.Net.State(), nil); err != nil {
		return nil, fmt.Errorf("encode model: %w", err)
	}
	return b.Bytes(), nil
}

// DecodeModel rebuilds a stored model. A model of another architecture,
// or whose weights do not fit the network, is refused with a message that
// says so; nothing is guessed.
func DecodeModel(pm project.Model) (*Model, error) {
	if pm.Architecture != Architecture {
		return nil, project.Explained(project.ErrInvalid, "model %q is of architecture %q, which this program does not run (it runs %q): train a new one",
			pm.Name, pm.Architecture, Architecture)
	}
	if len(pm.Classes) == 0 || pm.InputSize <= 0 {
		return nil, project.Explained(project.ErrInvalid, "model %q has no classes or input size", pm.Name)
	}
	net := NewNet(len(pm.Classes), pm.Seed)
	if err := nn.ReadParams(bytes.NewReader(pm.Weights), net.State(), nil); err != nil {
		return nil, project.Explained(project.ErrInvalid, "model %q: its weights cannot be read: %v", pm.Name, err)
	}
	return &Model{Net: net, Classes: pm.Classes, InputSize: pm.InputSize}, nil
}
