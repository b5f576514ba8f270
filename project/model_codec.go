package project

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"math"
)

// epochRow is an Epoch as stored: JSON has no NaN, so an unknown AP50 is
// null (the same text in every backend, so that a copy between backends
// moves it unchanged).
type epochRow struct {
	Epoch   int      `json:"epoch"`
	Loss    float64  `json:"loss"`
	ValAP50 *float64 `json:"val_ap50"`
	Seconds float64  `json:"seconds"`
}

// EncodeEpochs writes a learning curve as both backends store it: JSON,
// with an unknown AP50 as null. A loss that is not a number is refused.
func EncodeEpochs(es []Epoch) (string, error) {
	rows := make([]epochRow, len(es))
	for i, e := range es {
		rows[i] = epochRow{Epoch: e.Epoch, Loss: e.Loss, Seconds: e.Seconds}
		if !math.IsNaN(e.ValAP50) && !math.IsInf(e.ValAP50, 0) {
			v := e.ValAP50
			rows[i].ValAP50 = &v
		}
		if math.IsNaN(e.Loss) || math.IsInf(e.Loss, 0) {
			return "", Explained(ErrInvalid, "epoch %d: loss %v is not a number", e.Epoch, e.Loss)
		}
	}
	b, err := json.Marshal(rows)
	return string(b), err
}

// DecodeEpochs reads what EncodeEpochs wrote; null AP50 becomes NaN.
func DecodeEpochs(s string) ([]Epoch, error) {
	var rows []epochRow
	if err := json.Unmarshal([]byte(s), &rows); err != nil {
		return nil, err
	}
	out := make([]Epoch, len(rows))
	for i, r := range rows {
		out[i] = Epoch{Epoch: r.Epoch, Loss: r.Loss, Seconds: r.Seconds, ValAP50: math.NaN()}
		if r.ValAP50 != nil {
			out[i].ValAP50 = *r.ValAP50
		}
	}
	return out, nil
}

// WeightsSum is the SHA-256 (hex) a model's weights are checked against
// on every read.
func WeightsSum(b []byte) string {
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:])
}

// Check says what keeps a model from being stored: a bad name, no
// architecture, classes, input size or weights.
func (m Model) Check() error {
	if err := ValidateName("model", m.Name); err != nil {
		return Explained(ErrInvalid, "%v", err)
	}
	switch {
	case m.Architecture == "":
		return Explained(ErrInvalid, "model %q: no architecture", m.Name)
	case len(m.Classes) == 0:
		return Explained(ErrInvalid, "model %q: no classes", m.Name)
	case m.InputSize <= 0:
		return Explained(ErrInvalid, "model %q: input size %d", m.Name, m.InputSize)
	case len(m.Weights) == 0:
		return Explained(ErrInvalid, "model %q: no weights", m.Name)
	}
	return nil
}
