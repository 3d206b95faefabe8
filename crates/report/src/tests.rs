mod closed_form;
