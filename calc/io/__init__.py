"""Reading what a run is made of: quantity text (value ± u unit), the thermometer log and the run file."""
