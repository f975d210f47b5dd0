// Package pipeline joins striate's stages into one recognizer.
package pipeline
