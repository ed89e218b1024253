package capture_test

import (
	"fmt"
	"log"

	"patina/assets/capture"
)

// Load a capture, check it, and decode its first fitting photo.
func Example() {
	c, err := capture.Load("../../testdata/jar-small/capture.json")
	if err != nil {
		log.Fatal(err) // a *capture.Error lists every problem with its place
	}
	for _, p := range c.Validate() {
		fmt.Println(p.Severity, p)
	}
	fit := c.PhotosByUse(capture.UseFit)
	img, err := c.LoadPhoto(fit[0])
	if err != nil {
		log.Fatal(err)
	}
	cam, _ := c.CameraByID(c.Photos[fit[0]].Camera)
	fmt.Printf("%d fitting photos; %s is %dx%d, taken by %q looking along %.3f\n",
		len(fit), c.Photos[fit[0]].File, img.Width, img.Height, cam.ID, cam.Axis(2))
	// Output:
	// 3 fitting photos; photos/north-key.png is 64x48, taken by "north" looking along [0.016 0.974 -0.227]
}
