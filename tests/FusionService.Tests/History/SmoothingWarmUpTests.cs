// The start-up warm-up of the smoothed-track code runs its rounds and leaves no trace in the store.
using FusionService.History;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class SmoothingWarmUpTests(ServiceFixture fixture)
{
    [Fact]
    public async Task The_warm_up_runs_its_rounds_after_start_and_stores_nothing()
    {
        long vehiclesBefore = await fixture.CountAsync("SELECT count(*) FROM vehicles");
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Tracks:WarmUpRounds"] = "2" });
        using var client = fixture.Client(null, host);
        using var ready = await client.GetAsync("/health/ready");
        var warmUp = host.Services.GetRequiredService<SmoothingWarmUp>();
        var deadline = DateTime.UtcNow.AddSeconds(60);
        while (warmUp.RoundsDone < 2 && DateTime.UtcNow < deadline)
        {
            await Task.Delay(100);
        }

        Assert.Equal(2, warmUp.RoundsDone);
        Assert.Equal(vehiclesBefore, await fixture.CountAsync("SELECT count(*) FROM vehicles"));
        foreach (string table in new[] { "vehicles", "measurements", "filter_checkpoints", "fused_states" })
        {
            Assert.Equal(0, await fixture.CountAsync($"SELECT count(*) FROM {table} WHERE vehicle_id LIKE '%warm-up%'"));
        }
    }
}
