"""Escape routes: emergency illuminance along a route and the conversion planner."""
