"""Tables, figures, the HTML report and the run record (run.json) of every verb."""
