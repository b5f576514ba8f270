package project

import (
	"fmt"
	"path"
	"strings"
)

// ImageMatcher finds project images by the names interchange files use:
// the stored relative path, a trailing part of it, or the file name alone
// when that is unique in the project.
type ImageMatcher struct {
	byPath map[string]Image
	byBase map[string][]Image
	all    []Image
}

// NewImageMatcher indexes a project's images.
func NewImageMatcher(ims []Image) *ImageMatcher {
	m := &ImageMatcher{byPath: map[string]Image{}, byBase: map[string][]Image{}, all: ims}
	for _, im := range ims {
		m.byPath[im.Path] = im
		b := path.Base(im.Path)
		m.byBase[b] = append(m.byBase[b], im)
	}
	return m
}

// Match returns the image a record name refers to. ok is false when none
// does, or when the name is ambiguous (reason says which).
func (m *ImageMatcher) Match(name string) (im Image, ok bool, reason string) {
	name = strings.TrimPrefix(strings.ReplaceAll(name, "\\", "/"), "./")
	if im, ok := m.byPath[name]; ok {
		return im, true, ""
	}
	var hits []Image
	for _, im := range m.all {
		if strings.HasSuffix(im.Path, "/"+name) {
			hits = append(hits, im)
		}
	}
	if len(hits) == 0 {
		hits = m.byBase[path.Base(name)]
	}
	switch len(hits) {
	case 0:
		return Image{}, false, "no project image has this name"
	case 1:
		return hits[0], true, ""
	}
	return Image{}, false, fmt.Sprintf("%d project images have this name; give the relative path", len(hits))
}

// MatchStem is Match for layouts that name images only by file stem (the
// centre-normalised text layout's a.txt belongs to a.jpg, a.png …).
func (m *ImageMatcher) MatchStem(rel string) (im Image, ok bool, reason string) {
	rel = strings.TrimSuffix(strings.ReplaceAll(rel, "\\", "/"), path.Ext(rel))
	var hits []Image
	for _, im := range m.all {
		p := strings.TrimSuffix(im.Path, path.Ext(im.Path))
		if p == rel || strings.HasSuffix(p, "/"+rel) {
			hits = append(hits, im)
		}
	}
	if len(hits) == 0 {
		base := path.Base(rel)
		for _, im := range m.all {
			if strings.TrimSuffix(path.Base(im.Path), path.Ext(im.Path)) == base {
				hits = append(hits, im)
			}
		}
	}
	switch len(hits) {
	case 0:
		return Image{}, false, "no project image has this name"
	case 1:
		return hits[0], true, ""
	}
	return Image{}, false, fmt.Sprintf("%d project images share this name; keep the folder structure", len(hits))
}
