"""Dimensioning for a target blocking, and the plan year by year under growth."""
