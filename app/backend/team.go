package backend

import (
	"context"

	"boxwright/project"
	"boxwright/store/postgres"
)

// Team is the membership of a server project.
type Team interface {
	Team(ctx context.Context) ([]postgres.Member, error)
	AddMember(ctx context.Context, name, kind, password string) ([]string, error)
	RemoveMember(ctx context.Context, name string) ([]string, error)
	Close() error
}

// OpenTeam opens a server project's membership; a project file has no
// team (nor roles), and says so.
func OpenTeam(ctx context.Context, arg string) (Team, error) {
	w, err := Locate(arg)
	if err != nil {
		return nil, err
	}
	if !w.IsServer() {
		return nil, project.Explained(project.ErrInvalid, "%s is a project file: a team with roles and passwords belongs to a server project (postgres://… or @NAME)", arg)
	}
	s, err := postgres.Open(ctx, w.Server) // its errors name the server and database, never the password
	if err != nil {
		return nil, err
	}
	return s, nil
}

// Change is one change a server project announces (see postgres.Watch).
type Change = postgres.Change

// Member is a person of a server project's team.
type Member = postgres.Member

// Membership is what a server project says of the person logged in.
type Membership interface {
	Me(ctx context.Context) (Member, error)
}

// Claim is a live "I am labelling this image" of a server project.
type Claim = postgres.Claim

// Claimer is a project where people claim the images they work on.
type Claimer interface {
	Claim(ctx context.Context, imageID, annotatorID int64) ([]Claim, error)
	Release(ctx context.Context, imageID, annotatorID int64) error
	Claims(ctx context.Context) ([]Claim, error)
}

// Assigner hands a server project's images out to annotators.
type Assigner interface {
	Assign(ctx context.Context, imageIDs, annotatorIDs []int64, k int) (map[int64][]int64, error)
	Assignments(ctx context.Context) (map[int64][]int64, error)
}

// CacheUse is what a server project's image cache on this machine holds.
type CacheUse = postgres.CacheUse

// ImageCache is a server project's cache of image bytes on this machine.
type ImageCache interface {
	ImageCacheUse() (CacheUse, error)
	ClearImageCache() error
}

// Thumbnails are small pictures a server project stores once for every
// member, so that an image list needs no image's bytes.
type Thumbnails interface {
	Thumbnail(ctx context.Context, imageID int64) ([]byte, error)
}
