"""Using planner from Python: run the bundled demo ward, try 30 beds, compare, and size.

Run from the project folder: ``.venv/bin/python docs/example_api.py`` (about 10 s).
Results are decision support: staffing and capacity decisions follow local policy,
safe-staffing review and professional judgement; nurse ratios are minimums, not guarantees.
"""

import sys

import planner

PATHS = int(sys.argv[1]) if len(sys.argv) > 1 else 1000

plan = planner.load_scenario()  # the bundled demo; or planner.load_scenario("my_ward.toml")
run = planner.run(plan, paths=PATHS)
print(
    f"{plan.name}: chance of no free bed at some moment in the first "
    f"{run.headline.weeks} weeks {run.headline.p_bed_shortfall:.0%}"
)
print(run.weekly[["week_start", "p_bed_shortfall", "expected_patients_affected"]].head())

bigger = plan.with_changes({"beds.base": 30, "name": "30 beds"})
comparison = planner.compare([plan, bigger], paths=PATHS)
print(comparison.glance.to_string(index=False))

sizing = planner.size(plan, paths=PATHS)
print(f"beds needed for the default target: {sizing.beds_needed} (now {sizing.current_beds})")

# A history may be given as tables instead of files: here Larch Ward's rows of the demo
# hospital's export, read with pandas (its "NULL" discharges become NaT).
import pandas as pd  # noqa: E402

export = pd.read_csv(plan.episodes_file)
larch = export[export["Ward"] == "Larch"]
episodes = pd.DataFrame(
    {
        "admitted_at": pd.to_datetime(larch["Admission Date"], format="%d/%m/%Y %H:%M"),
        "discharged_at": pd.to_datetime(larch["Discharge Date"], format="%d/%m/%Y %H:%M"),
    }
)
again = planner.run(plan, episodes=episodes, paths=PATHS)
print("same weekly table from a DataFrame:", again.weekly.equals(run.weekly))
