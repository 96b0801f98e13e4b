//go:build js

package main

import (
	"encoding/json"
	"syscall/js"
)

func main() {
	self := js.Global()
	s := newServer(func(msg map[string]any) {
		b, err := json.Marshal(msg)
		if err != nil {
			b, _ = json.Marshal(map[string]any{"id": msg["id"], "type": "error", "error": "encoding the answer: " + err.Error()})
		}
		self.Call("postMessage", string(b))
	})
	self.Set("gapbookHandle", js.FuncOf(func(_ js.Value, a []js.Value) any {
		if len(a) == 1 && a[0].Type() == js.TypeString {
			// Never block inside a callback: the request runs on its own goroutine.
			go s.handle([]byte(a[0].String()))
		}
		return nil
	}))
	s.ready()
	select {}
}
