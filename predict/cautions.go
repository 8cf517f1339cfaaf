package predict

// HandlingCautions are shown wherever settle reports a specimen ready to handle (a
// target with Handling set): the status page, the API, webhooks, run reports and
// `settle fit`. Every one of them reads this list; never shorten it.
var HandlingCautions = []string{
	"This is an estimate from a fitted model, not a measurement of the whole specimen.",
	"Verify the temperature with a contact thermometer before handling.",
	"Wear protective gloves.",
	"The core lags the surface: the inside can be much hotter than the thermocouple reads.",
	"Your lab's own rules and local regulations take precedence.",
}
