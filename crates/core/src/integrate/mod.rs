//! Adaptive explicit Runge–Kutta integration with dense output and events.
