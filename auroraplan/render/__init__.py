"""Outputs people use: text tables, phone page, PDF itinerary, calendar, charts."""
