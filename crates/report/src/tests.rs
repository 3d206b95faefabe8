mod circuits;
mod closed_form;
