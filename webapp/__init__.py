"""cupcal web notebook (Flask). Placeholder until the notebook issue: nothing here is used yet."""
