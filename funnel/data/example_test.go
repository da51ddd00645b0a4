package data_test

import (
	"fmt"
	"strings"
	"time"

	"spillway/funnel/data"
)

// ExampleRead reads a regional file of 52 weeks and sums it nationally.
func ExampleRead() {
	var b strings.Builder
	b.WriteString("week,region,tv,radio,search,brand_queries,orders\n")
	start := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	for t := range 52 {
		for g, region := range []string{"east", "west"} {
			w := start.AddDate(0, 0, 7*t).Format(data.DateLayout)
			fmt.Fprintf(&b, "%s,%s,%d,%d,%d,%d,%d\n", w, region, 100+t%7+g, 50+t%5, 80+t%3, 1000+10*(t%4), 300+t%6)
		}
	}
	spec := data.Spec{Date: "week", Region: "region", Upper: []string{"tv", "radio"}, Search: []string{"search"},
		Queries: "brand_queries", Outcome: "orders"}
	d, err := data.Read(strings.NewReader(b.String()), "plan.csv", spec)
	if err != nil {
		fmt.Println(err)
		return
	}
	nat := d.National()
	fmt.Println(len(d.Weeks), "weeks,", len(d.Regions), "regions")
	fmt.Println("national tv spend in week 1:", nat.Upper[0][0])

	// A bad cell is reported with its file, line and column.
	bad := strings.Replace(b.String(), "2024-01-15,east,102", "2024-01-15,east,1O2", 1)
	_, err = data.Read(strings.NewReader(bad), "plan.csv", spec)
	fmt.Println(err)
	// Output:
	// 52 weeks, 2 regions
	// national tv spend in week 1: 201
	// plan.csv:6:3: column "tv": "1O2" is not a number; expected a plain decimal like 1250.5
}
