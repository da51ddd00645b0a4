package model

import "testing"

// TestLayout checks that the layout finds each parameter by meaning at the
// position Names gives it, for saturating and linear channels.
func TestLayout(t *testing.T) {
	sc := testScaled(60, 2)
	for _, o := range []Options{{}, {Linear: map[string]bool{"video": true}}} {
		st, _ := Outcome(sc, o)
		l := st.Layout()
		names := st.Names()
		v := make([]float64, len(names))
		for i := range v {
			v[i] = float64(i) + 0.5
		}
		p := l.View(v)
		if names[l.InterceptSlot()] != "mu_y" || p.Intercept() != v[0] {
			t.Errorf("intercept at %d (%s)", l.InterceptSlot(), names[l.InterceptSlot()])
		}
		if names[l.SigmaSlot()] != "sigma_y" || p.Sigma() != v[len(v)-1] {
			t.Errorf("sigma at %d", l.SigmaSlot())
		}
		if names[l.GammaSlot()] != "gamma" || p.Gamma() != v[l.GammaSlot()] {
			t.Errorf("gamma at %d", l.GammaSlot())
		}
		for j, c := range st.Channels {
			m := p.ChannelAt(j)
			cs := l.Channels()[j]
			if names[cs.Coef] != c.Params[0].Name || m.Coef != v[cs.Coef] || m.Linear != c.Linear {
				t.Errorf("channel %s coef at %d (%s)", c.Column, cs.Coef, names[cs.Coef])
			}
			if !c.Linear && (names[cs.Lam] != c.Params[1].Name || names[cs.K] != c.Params[2].Name || names[cs.S] != c.Params[3].Name || m.S != v[cs.S]) {
				t.Errorf("channel %s transforms at %d %d %d", c.Column, cs.Lam, cs.K, cs.S)
			}
			h, coef := st.Response(nil, j, v, c.X)
			got := m.Response(nil, c.X)
			if coef != m.Coef {
				t.Errorf("channel %s: coefficient %v, Response says %v", c.Column, m.Coef, coef)
			}
			for i := range h {
				if h[i] != got[i] {
					t.Fatalf("channel %s week %d: response %v, want %v", c.Column, i, got[i], h[i])
				}
			}
		}
		r := p.Rescaled(2, 3)
		for i := range v {
			want := 2 * v[i]
			switch {
			case i == l.GammaSlot():
				want = 3 * v[i]
			case names[i][:3] == "lam" || names[i][:1] == "K" || names[i][:1] == "S":
				want = v[i]
			}
			if r[i] != want {
				t.Errorf("Rescaled %s = %v, want %v", names[i], r[i], want)
			}
		}
		d, _ := Demand(sc, o)
		if d.Layout().HasGamma() || d.Layout().View(make([]float64, len(d.Names()))).Gamma() != 0 {
			t.Error("the demand stage has no gamma")
		}
	}
}
