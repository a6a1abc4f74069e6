// The stored outcome codes are part of the schema: they must stay what the migrations and existing rows use.
using FusionService.Estimation.Tracking;
using FusionService.Storage.Measurements;

namespace FusionService.Storage.Tests.Measurements;

public sealed class OutcomeCodesTests
{
    // The codes as the schema defines them: 0-4 in migration 0001 (CHECK outcome BETWEEN 0 AND 4), 5-7 added by
    // 0002_track_outcomes, 8 by 0010_unusable_outcome; the meanings are those of the former stored enum.
    [Theory]
    [InlineData(OutcomeKind.Accepted, 0)]
    [InlineData(OutcomeKind.Gated, 1)]
    [InlineData(OutcomeKind.TooLate, 2)]
    [InlineData(OutcomeKind.Duplicate, 3)]
    [InlineData(OutcomeKind.Pending, 4)]
    [InlineData(OutcomeKind.Initialising, 5)]
    [InlineData(OutcomeKind.BeforeStart, 6)]
    [InlineData(OutcomeKind.Unused, 7)]
    [InlineData(OutcomeKind.Unusable, 8)]
    public void Stored_codes_are_those_of_the_schema(OutcomeKind outcome, short code)
    {
        Assert.Equal(code, OutcomeCodes.ToCode(outcome));
        Assert.Equal(outcome, OutcomeCodes.FromCode(code));
    }

    [Fact]
    public void Outcomes_without_a_code_and_unknown_codes_are_refused()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => OutcomeCodes.ToCode(OutcomeKind.Conflict));
        Assert.Throws<ArgumentOutOfRangeException>(() => OutcomeCodes.ToCode(OutcomeKind.TrackReset));
        Assert.Throws<ArgumentOutOfRangeException>(() => OutcomeCodes.FromCode(9));
        Assert.Throws<ArgumentOutOfRangeException>(() => OutcomeCodes.FromCode(-1));
    }
}
