package sim

// duffing holds the coefficients of
//
//	x'' = f(t) − c·x' − k·x − β·x³,   c = 2ζω0, k = ω0²,
//
// with f(t) = g·u(t) the forcing in m/s².
type duffing struct {
	c    float64 // 2ζω0, 1/s
	k    float64 // ω0², 1/s²
	beta float64 // β, 1/(m²·s²)
}

// accel returns x” for displacement x (m), velocity v (m/s) and forcing f
// (m/s²).
func (p *duffing) accel(x, v, f float64) float64 {
	return f - p.c*v - p.k*x - p.beta*x*x*x
}

// step advances (x, v) by one classical fourth-order Runge–Kutta step of
// length dt seconds, given the forcing at the start (f0), the middle (fm) and
// the end (f1) of the step:
//
//	k1 = F(t, y), k2 = F(t+dt/2, y+dt/2·k1), k3 = F(t+dt/2, y+dt/2·k2),
//	k4 = F(t+dt, y+dt·k3), y' = y + dt/6·(k1 + 2k2 + 2k3 + k4)
//
// (Kutta 1901; Hairer, Nørsett & Wanner, Solving Ordinary Differential
// Equations I, 1993 — section from memory). Its global error is O(dt⁴).
func (p *duffing) step(x, v, dt, f0, fm, f1 float64) (float64, float64) {
	hd := 0.5 * dt
	k1x, k1v := v, p.accel(x, v, f0)
	x2, v2 := x+hd*k1x, v+hd*k1v
	k2x, k2v := v2, p.accel(x2, v2, fm)
	x3, v3 := x+hd*k2x, v+hd*k2v
	k3x, k3v := v3, p.accel(x3, v3, fm)
	x4, v4 := x+dt*k3x, v+dt*k3v
	k4x, k4v := v4, p.accel(x4, v4, f1)
	d6 := dt / 6
	return x + d6*(k1x+2*k2x+2*k3x+k4x), v + d6*(k1v+2*k2v+2*k3v+k4v)
}

// energy returns the mechanical energy per unit mass of the undamped,
// undriven resonator, E = ½v² + ½ω0²x² + ¼βx⁴ in m²/s², which that motion
// conserves.
func (p *duffing) energy(x, v float64) float64 {
	return 0.5*v*v + 0.5*p.k*x*x + 0.25*p.beta*x*x*x*x
}
