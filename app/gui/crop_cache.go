package gui

import (
	"container/list"
	"image"
)

// cropCache keeps the most recently used crops by suggestion ID.
type cropCache struct {
	max   int
	order *list.List // front: most recent; values are *cropEntry
	by    map[int64]*list.Element
}

type cropEntry struct {
	id  int64
	img image.Image
}

func newCropCache(max int) *cropCache {
	return &cropCache{max: max, order: list.New(), by: map[int64]*list.Element{}}
}

func (c *cropCache) get(id int64) image.Image {
	if e, ok := c.by[id]; ok {
		c.order.MoveToFront(e)
		return e.Value.(*cropEntry).img
	}
	return nil
}

func (c *cropCache) put(id int64, img image.Image) {
	if e, ok := c.by[id]; ok {
		e.Value.(*cropEntry).img = img
		c.order.MoveToFront(e)
		return
	}
	c.by[id] = c.order.PushFront(&cropEntry{id, img})
	for c.order.Len() > c.max {
		old := c.order.Back()
		c.order.Remove(old)
		delete(c.by, old.Value.(*cropEntry).id)
	}
}

func (c *cropCache) len() int { return c.order.Len() }
