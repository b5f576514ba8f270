package main

import (
	_ "fyne.io/fyne/v2/app"
	_ "github.com/mattn/go-sqlite3"
	_ "golang.org/x/image/webp"
)

func main() {}
