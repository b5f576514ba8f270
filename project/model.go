package project

import (
	"context"
	"time"
)

// Epoch is one point of a model's learning curve.
type Epoch struct {
	Epoch   int     `json:"epoch"`
	Loss    float64 `json:"loss"`
	ValAP50 float64 `json:"val_ap50"` // NaN when there was no validation image
	Seconds float64 `json:"seconds"`  // since training started
}

// Model is a detector trained from the project's labels, as stored in the
// project.
type Model struct {
	ID int64
	// Name is unique in the project and is the source name of the model's
	// suggestions (for example "trained-3").
	Name string
	// Architecture names the network and its version; weights are read only
	// by the code of that architecture.
	Architecture string
	// Classes are the class names of the model's outputs, in order.
	Classes []string
	// InputSize is the long side of the network input in pixels.
	InputSize int
	// TrainedOn says for people what the model learned from.
	TrainedOn string
	Seed      uint64
	// Epochs is the learning curve; ValAP50 the validation AP50 of the
	// weights kept (NaN when unknown).
	Epochs  []Epoch
	ValAP50 float64
	Current bool
	Created time.Time
	Updated time.Time
	// Weights are the serialised parameters; Models leaves them out.
	Weights []byte
}

// ModelStore keeps trained detectors.
type ModelStore interface {
	// AddModel stores a new model; with m.Current (or as the first model)
	// it becomes the current one. An empty Name takes the next
	// "trained-N".
	AddModel(ctx context.Context, m Model) (Model, error)
	// UpdateModel replaces a model's weights, learning curve and figures
	// (training continued from it), by ID.
	UpdateModel(ctx context.Context, m Model) error
	// Models lists the models, oldest first, without their weights.
	Models(ctx context.Context) ([]Model, error)
	// Model reads one model by name with its weights, refusing weights
	// whose checksum does not match.
	Model(ctx context.Context, name string) (Model, error)
	// CurrentModel reads the current model with its weights; ErrNotFound
	// when there is none.
	CurrentModel(ctx context.Context) (Model, error)
	SetCurrentModel(ctx context.Context, name string) error
	DeleteModel(ctx context.Context, name string) error
}
