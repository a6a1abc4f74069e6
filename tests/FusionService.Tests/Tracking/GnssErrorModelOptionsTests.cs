// Section GnssErrorModel reaches the tracks' filter, and a value outside its range stops the start (issue 12).
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using FusionService.Vehicles;
using Microsoft.Extensions.Options;

namespace FusionService.Tests.Tracking;

[Collection(ServiceTests.Name)]
public sealed class GnssErrorModelOptionsTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue12_the_configured_error_model_is_the_one_the_tracks_filter_with()
    {
        await using var configured = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["GnssErrorModel:CorrelatedShare"] = "0.9",
            ["GnssErrorModel:TimeConstantS"] = "120",
            ["GnssErrorModel:FitPerVehicle"] = "false",
        });
        using var client = configured.CreateClient();
        NoiseProfile profile = configured.Services.GetRequiredService<TrackProcessor>().Profile;
        // And a vehicle's state says which model its track uses (the fit off, and no stop yet either).
        var fleet = await fixture.NewFleetAsync();
        await fixture.Client(fleet.IngestKey, configured).IngestOkAsync(StartingFixes.Two("van-model"));
        await configured.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        var state = await fixture.Client(fleet.ReadKey, configured).StateAsync("van-model");
        Assert.Equal(new GnssErrorModelResponse(0.9, 120.0, Fitted: false, StartedFrom: "settings"), state.GnssErrorModel);
        Assert.Equal(0.9, profile.GnssCorrelatedFraction);
        Assert.Equal(120.0, profile.GnssErrorTimeConstantS);
        Assert.False(profile.GnssErrorIdentification);
        // The rest of the profile is the delivery van's.
        Assert.Equal(NoiseProfile.DeliveryVan.GyroSigmaRps, profile.GyroSigmaRps);
        Assert.Equal(NoiseProfile.DeliveryVan.WheelSpeedSigmaMps, profile.WheelSpeedSigmaMps);

        await using var defaults = new ServiceFactory(fixture.ConnectionString);
        using var defaultClient = defaults.CreateClient();
        Assert.Equal(NoiseProfile.DeliveryVan, defaults.Services.GetRequiredService<TrackProcessor>().Profile);
    }

    [Theory]
    [InlineData("GnssErrorModel:CorrelatedShare", "1", "CorrelatedShare")]
    [InlineData("GnssErrorModel:TimeConstantS", "0", "TimeConstantS")]
    public async Task Issue12_an_error_model_outside_its_range_stops_the_start_naming_the_key(string key, string value, string named)
    {
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { [key] = value });
        var error = Assert.ThrowsAny<Exception>(() => host.CreateClient());
        var validation = error as OptionsValidationException ?? error.InnerException as OptionsValidationException
            ?? (error as AggregateException)?.InnerExceptions.OfType<OptionsValidationException>().FirstOrDefault();
        Assert.NotNull(validation);
        Assert.Contains(named, validation.Message, StringComparison.Ordinal);
    }
}
