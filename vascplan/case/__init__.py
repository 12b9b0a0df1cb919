"""Case files: one patient's arteries, lesions, stents, grafts and procedure."""
