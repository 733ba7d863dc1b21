"""The bench: weigh sheets for a batch, ingredient prices, screening series for required HLB."""
