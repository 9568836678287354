namespace TopicGroups.Core.Terms;

/// <summary>A term (a word, or two words joined by a space) and its TF-IDF weight within one group.</summary>
public readonly record struct WeightedTerm(string Term, double Weight);
