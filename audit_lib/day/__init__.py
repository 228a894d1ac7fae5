"""Time: lamp schedules over the day and year, daily doses, hours in range and time budgets."""
