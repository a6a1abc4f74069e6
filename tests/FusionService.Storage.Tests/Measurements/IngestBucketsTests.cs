using System.Text;
using FusionService.Storage.Measurements;
using Xunit;

namespace FusionService.Storage.Tests.Measurements;

/// <summary>The ingest lock buckets: FNV-1a as published, and a spread that keeps the commit writers' shares even.</summary>
public sealed class IngestBucketsTests
{
    // FNV-1a 64-bit test vectors of the FNV specification (Fowler, Noll, Vo; IETF draft-eastlake-fnv, test vectors
    // appendix): the empty string gives the offset basis. Values recalled from memory and recomputed with an independent
    // few-line implementation before they were written here.
    [Theory]
    [InlineData("", 0xcbf29ce484222325UL)]
    [InlineData("a", 0xaf63dc4c8601ec8cUL)]
    [InlineData("foobar", 0x85944171f73967e8UL)]
    public void Mix_is_fnv1a_64(string text, ulong expected) =>
        Assert.Equal(expected, IngestBuckets.Mix(14695981039346656037UL, Encoding.ASCII.GetBytes(text)));

    [Fact]
    public void A_vehicle_has_one_bucket_everywhere_and_a_fleet_spreads_over_all()
    {
        var fleet = Guid.Parse("3f2a9c1e-7b4d-4e8f-a0b1-c2d3e4f50617");
        Assert.Equal(IngestBuckets.Of(fleet, "van-07"), IngestBuckets.Of(fleet, "van-07"));
        var counts = new int[IngestBuckets.Count];
        for (int i = 0; i < 12_800; i++)
        {
            counts[IngestBuckets.Of(fleet, $"load-{i:000000}")]++;
        }

        // 100 expected per bucket; a binomial(12,800, 1/128) lies within 100 +- 45 (4.5 standard deviations of 9.96) for
        // every one of 128 buckets but with a probability of about 0.1 %.
        Assert.All(counts, c => Assert.InRange(c, 55, 145));
    }
}
