"""What a sheet describes: the elements, the check limits, the document parser, cases."""
