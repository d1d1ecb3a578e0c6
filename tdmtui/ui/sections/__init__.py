"""The workspace's sections: patient, doses, levels, estimate, plan, note."""
