-- costdrift store, schema 20: the price level a formula is at.
--
-- With analysis.deflator set, costs are restated at the newest analysed
-- period's prices before they are fitted (README, Prices and inflation):
-- the formula's money, its break and its spending checks are then at that
-- period's prices, and a budget for a later period moves them to its own
-- by the index. price_base is that period; NULL when the costs were fitted
-- as posted (no deflator, or an object exempt from it).
ALTER TABLE behaviour_history ADD COLUMN price_base TEXT;
